package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/kchol/kchol/cholesky"
)

func TestParseMemory(t *testing.T) {
	cases := []struct {
		in   string
		want int64
	}{
		{"0", 0},
		{"2e9", 2e9},
		{"500MB", 500e6},
		{"4GiB", 4 << 30},
		{"1.5 KiB", 1536},
		{"12B", 12},
	}
	for _, c := range cases {
		got, err := parseMemory(c.in)
		if err != nil || got != c.want {
			t.Errorf("parseMemory(%q) = %d, %v; want %d", c.in, got, err, c.want)
		}
	}
	for _, bad := range []string{"-1", "lots", "4XB", "1e300GB"} {
		if _, err := parseMemory(bad); err == nil {
			t.Errorf("parseMemory(%q) accepted", bad)
		}
	}
	// The default is 80 % of MemTotal in /proc/meminfo (0, no limit, where it is unreadable).
	if def, err := parseMemory(""); err != nil || def != physicalMemory()/5*4 {
		t.Errorf("default %d, %v; want 80%% of %d", def, err, physicalMemory())
	}
}

func TestProgressLines(t *testing.T) {
	var buf bytes.Buffer
	p := newProgress(&buf, false)
	p.report(cholesky.Progress{Phase: cholesky.PhaseOrdering, Done: 0, Total: 1})
	if buf.Len() != 0 {
		t.Fatalf("progress shown before the quiet period: %q", buf.String())
	}
	p.start = time.Now().Add(-3 * time.Second) // pretend the run is 3 s old
	p.report(cholesky.Progress{Phase: cholesky.PhaseFactor, Done: 0, Total: 100})
	p.report(cholesky.Progress{Phase: cholesky.PhaseFactor, Done: 50, Total: 100}) // within linePeriod: dropped
	p.report(cholesky.Progress{Phase: cholesky.PhaseFactor, Done: 100, Total: 100})
	p.finish()
	lines := strings.Split(strings.TrimSpace(buf.String()), "\n")
	if len(lines) != 2 || !strings.Contains(lines[0], "factor 0%") || !strings.Contains(lines[1], "factor 100%") {
		t.Errorf("lines %q, want the start and the end of the factor phase", lines)
	}
	quiet := newProgress(&buf, true)
	quiet.start = time.Now().Add(-time.Hour)
	buf.Reset()
	quiet.report(cholesky.Progress{Phase: cholesky.PhaseFactor, Done: 1, Total: 2})
	if buf.Len() != 0 {
		t.Errorf("-quiet printed %q", buf.String())
	}
}

func TestFactorLambdaAndMemoryFlags(t *testing.T) {
	dir := t.TempDir()
	points := writeCSV(t, dir, "p.csv", []string{"x", "y"}, testPoints(600, 2))
	out := filepath.Join(dir, "f.kchol")
	base := []string{"factor", "-points", points, "-kernel", "matern32", "-lengthscale", "0.2", "-o", out}

	code, _, stderr := runKchol(append(base, "-lambda", "0")...)
	if code != 0 || !strings.Contains(stderr, "600 supernodes (1.00 columns each)") {
		t.Fatalf("-lambda 0: exit %d, %q; want one supernode per column", code, stderr)
	}
	code, _, stderr = runKchol(append(base, "-lambda", "2")...)
	if code != 0 || strings.Contains(stderr, "600 supernodes") {
		t.Fatalf("-lambda 2: exit %d, %q; want fewer supernodes than columns", code, stderr)
	}
	if code, _, stderr := runKchol(append(base, "-lambda", "0.5")...); code != 2 || !strings.Contains(stderr, "-lambda") {
		t.Errorf("-lambda 0.5: exit %d, %q", code, stderr)
	}
	os.Remove(out)
	code, _, stderr = runKchol(append(base, "-max-memory", "1kB")...)
	if code != 1 || !strings.Contains(stderr, "more than the limit") || strings.Count(strings.TrimSpace(stderr), "\n") != 0 {
		t.Errorf("-max-memory 1kB: exit %d, %q; want one line naming the limit", code, stderr)
	}
	if _, err := os.Stat(out); !os.IsNotExist(err) {
		t.Errorf("a refused factor left %s behind", out)
	}
}

func TestFactorGreedyFlags(t *testing.T) {
	dir := t.TempDir()
	points := writeCSV(t, dir, "p.csv", []string{"x", "y"}, testPoints(500, 2))
	out := filepath.Join(dir, "g.kchol")
	base := []string{"factor", "-points", points, "-kernel", "matern32", "-lengthscale", "0.2", "-neighbors", "8", "-o", out}
	code, _, stderr := runKchol(append(base, "-greedy", "-candidates", "20")...)
	if code != 0 || !strings.Contains(stderr, "greedy pattern m = 8 of 20 candidates") {
		t.Fatalf("-greedy: exit %d, %q", code, stderr)
	}
	// The factor file records the choice; solve reads it back and names it.
	rhs := writeCSV(t, dir, "b.csv", []string{"b"}, testPoints(500, 1))
	code, _, stderr = runKchol("solve", "-factor", out, "-rhs", rhs, "-o", filepath.Join(dir, "x.csv"))
	if code != 0 || !strings.Contains(stderr, "greedy pattern m = 8 of 20 candidates") {
		t.Fatalf("solve of a greedy factor: exit %d, %q", code, stderr)
	}
	for _, bad := range [][]string{
		{"-greedy", "-rho", "2"},
		{"-candidates", "20"},
		{"-greedy", "-candidates", "3"},
	} {
		args := append(append([]string{}, base[:len(base)-2]...), bad...)
		args = append(args, "-o", filepath.Join(dir, "bad.kchol"))
		if code, _, stderr := runKchol(args...); code != 2 || strings.Count(strings.TrimSpace(stderr), "\n") != 0 {
			t.Errorf("%v: exit %d, %q; want one usage line", bad, code, stderr)
		}
	}
}

func TestFactorJointFlag(t *testing.T) {
	dir := t.TempDir()
	points := writeCSV(t, dir, "p.csv", []string{"x", "y"}, testPoints(800, 2))
	out := filepath.Join(dir, "j.kchol")
	code, _, stderr := runKchol("factor", "-points", points, "-kernel", "matern32", "-lengthscale", "0.2", "-neighbors", "12", "-greedy", "-joint", "-o", out)
	if code != 0 || !strings.Contains(stderr, "joint greedy pattern, 12 shared points per supernode") {
		t.Fatalf("-greedy -joint: exit %d, %q", code, stderr)
	}
	if code, _, stderr := runKchol("factor", "-points", points, "-kernel", "matern32", "-lengthscale", "0.2", "-joint", "-o", out); code != 2 || !strings.Contains(stderr, "-joint needs -greedy") {
		t.Errorf("-joint alone: exit %d, %q", code, stderr)
	}
}
