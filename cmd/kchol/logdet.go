package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"time"

	"github.com/kchol/kchol/cholesky"
)

func logdetCommand() (*flag.FlagSet, func(context.Context, *flag.FlagSet, io.Writer, io.Writer) error) {
	fs := newFlagSet("logdet")
	factor := fs.String("factor", "", "factor `file` written by kchol factor (required)")
	return fs, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error {
		return runLogdet(fs, *factor, stdout, stderr)
	}
}

// runLogdet prints log det Θ̃ = −2 Σ log Lⱼⱼ of the factor as the last line of stdout, in
// %.17g so that it reads back to the same float64.
func runLogdet(fs *flag.FlagSet, path string, stdout, stderr io.Writer) error {
	if !flagsSet(fs)["factor"] {
		return usagef("logdet: missing -factor")
	}
	start := time.Now()
	f, err := cholesky.ReadFile(path)
	if err != nil {
		return err
	}
	readTime := time.Since(start)
	fmt.Fprintf(stdout, "%.17g\n", f.LogDet())
	fmt.Fprintf(stderr, "kchol logdet: %s; seconds: read %s%s\n", describe(f), seconds(readTime), jitterNote(f))
	return nil
}
