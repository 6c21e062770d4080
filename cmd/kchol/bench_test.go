package main

import (
	"os"
	"path/filepath"
	"testing"
)

func TestBenchConfigCGNugget(t *testing.T) {
	// The CG nugget comes from the flag's default without a config file, from the file when
	// the flag is not given, and from the flag when it is (flags override the file, as the
	// -config flag's help says).
	dir := t.TempDir()
	file := filepath.Join(dir, "c.json")
	if err := os.WriteFile(file, []byte(`{"cg_nugget": 0.0001}`), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		want float64
	}{
		{nil, 1e-6},
		{[]string{"-config", file}, 1e-4},
		{[]string{"-config", file, "-cg-nugget", "0"}, 0},
		{[]string{"-cg-nugget", "1e-3"}, 1e-3},
	} {
		fs, o := newBenchFlags()
		if err := fs.Parse(tc.args); err != nil {
			t.Fatal(err)
		}
		c, err := benchConfig(fs, o)
		if err != nil {
			t.Fatalf("%v: %v", tc.args, err)
		}
		if c.CGNugget == nil || *c.CGNugget != tc.want {
			t.Errorf("%v: CG nugget %v, want %g", tc.args, c.CGNugget, tc.want)
		}
	}
}
