// Command kchol computes the KL-optimal sparse inverse Cholesky factor of a kernel matrix,
// Θ⁻¹ ≈ L Lᵀ, for points read from a CSV file, and uses a stored factor to apply Θ⁻¹ ≈ L Lᵀ
// to right-hand sides and to compute the log-determinant. It is a thin front end of package cholesky: it
// parses files and flags, calls the library and formats the results.
//
// Usage:
//
//	kchol factor -points P.csv [-columns x,y,...] -kernel matern12|matern32|matern52|gaussian
//	             -lengthscale L [-variance V] [-nugget E] [-neighbors M | -rho R] [-workers W] -o F
//	kchol solve  -factor F -rhs B.csv [-workers W] -o X.csv
//	kchol logdet -factor F
//	kchol timing [-n N] [-points uniform|clustered] [flags]
//	kchol demo   [flags]
//	kchol help
//
// Errors are one line on standard error starting with "kchol: "; the exit status is 1, or 2
// for a usage error. Output files are written to a temporary file and renamed only after
// success, so a failed run creates or changes nothing.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// usageError is an error in the command line (exit status 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error {
	return usageError{fmt.Sprintf(format, args...)}
}

// command is one sub-command: its flags and what it does.
type command struct {
	name, synopsis, summary string
	// flags returns a fresh flag set and a function that runs the command after parsing.
	flags func() (*flag.FlagSet, func(ctx context.Context, fs *flag.FlagSet, stdout, stderr io.Writer) error)
}

func commands() []command {
	return []command{
		{"factor", "-points P.csv -kernel K -lengthscale L -o F [flags]",
			"order the points, build the pattern and compute the factor; write it to F", factorCommand},
		{"solve", "-factor F -rhs B.csv -o X.csv [flags]",
			"compute X = L Lᵀ B ≈ Θ⁻¹ B for every column of B.csv; rows in the order of P.csv", solveCommand},
		{"logdet", "-factor F",
			"print log det Θ ≈ −2 Σ log Lⱼⱼ (the last line of standard output)", logdetCommand},
		{"bench", "-o DIR [-config C.json] [flags]", "measure accuracy against dense solves, baselines and time against N; write a report to DIR", benchCommand},
		{"timing", "[-n N] [-points uniform|clustered] [flags]",
			"time ordering, pattern, aggregation and factor on generated points, with throughput against gonum's Potrf", timingCommand},
	}
}

// run executes kchol with the arguments args (without the program name) and returns the exit
// status: 0 on success, 1 on an error, 2 on a usage error.
func run(args []string, stdout, stderr io.Writer) int {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	err := dispatch(ctx, args, stdout, stderr)
	switch {
	case err == nil:
		return 0
	case errors.Is(err, flag.ErrHelp):
		return 0
	}
	msg := strings.ReplaceAll(strings.TrimSpace(err.Error()), "\n", " ")
	fmt.Fprintf(stderr, "kchol: %s\n", msg)
	var ue usageError
	if errors.As(err, &ue) {
		return 2
	}
	return 1
}

func dispatch(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usagef("no command (run 'kchol help' for usage)")
	}
	name, rest := args[0], args[1:]
	switch name {
	case "help", "-h", "-help", "--help":
		printUsage(stdout)
		return nil
	case "demo":
		return runDemo(rest, stdout, stderr)
	}
	for _, c := range commands() {
		if c.name != name {
			continue
		}
		fs, do := c.flags()
		if err := fs.Parse(rest); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				printCommandUsage(stdout, c)
				return err
			}
			return usagef("%s: %v", name, err)
		}
		if fs.NArg() > 0 {
			return usagef("%s: unexpected argument %q", name, fs.Arg(0))
		}
		return do(ctx, fs, stdout, stderr)
	}
	return usagef("unknown command %q (want factor, solve, logdet, demo or help)", name)
}

func newFlagSet(name string) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard) // errors are reported by run, help by printCommandUsage
	return fs
}

func printUsage(w io.Writer) {
	fmt.Fprint(w, `kchol computes the KL-optimal sparse inverse Cholesky factor of a kernel matrix,
Θ⁻¹ ≈ L Lᵀ (the Vecchia approximation in a reverse maximin ordering), and uses it.

Usage:
`)
	for _, c := range commands() {
		fmt.Fprintf(w, "  kchol %-6s %s\n", c.name, c.synopsis)
	}
	fmt.Fprint(w, `  kchol demo   [flags]   (kchol demo -h lists its flags)
  kchol help

Commands:
`)
	for _, c := range commands() {
		fmt.Fprintf(w, "  %-7s %s\n", c.name, c.summary)
	}
	fmt.Fprintln(w, "  demo    run a demonstration on generated data")
	fmt.Fprint(w, `
CSV files have a header row. Errors go to standard error as one line starting "kchol: ";
the exit status is 1, or 2 for a usage error, and no output file is created.
`)
	for _, c := range commands() {
		fmt.Fprintf(w, "\nFlags of %s:\n", c.name)
		fs, _ := c.flags()
		fs.SetOutput(w)
		fs.PrintDefaults()
	}
}

func printCommandUsage(w io.Writer, c command) {
	fmt.Fprintf(w, "Usage: kchol %s %s\n\n%s.\n\nFlags:\n", c.name, c.synopsis, c.summary)
	fs, _ := c.flags()
	fs.SetOutput(w)
	fs.PrintDefaults()
}
