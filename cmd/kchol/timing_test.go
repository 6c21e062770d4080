package main

import (
	"strings"
	"testing"
)

func TestTimingPatterns(t *testing.T) {
	// kchol timing builds the pattern it is asked for: the description line names it, with
	// the default 4m candidates for greedy selection (the -candidates flag's documented
	// default), and the phase and throughput lines are printed.
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"-rho", "2"}, "pattern: radius ρ = 2, λ = 1.5"},
		{[]string{"-neighbors", "8"}, "pattern: nearest neighbours m = 8, λ = 1.5"},
		{[]string{"-neighbors", "8", "-greedy"}, "pattern: greedy m = 8, 32 candidates, λ = 1.5"},
		{[]string{"-neighbors", "8", "-greedy", "-candidates", "20", "-lambda", "1"}, "pattern: greedy m = 8, 20 candidates, λ = 1"},
		{[]string{"-neighbors", "8", "-greedy", "-joint"}, "pattern: joint greedy m = 8 per supernode, 32 candidates, λ = 1.5"},
	} {
		args := append([]string{"timing", "-n", "3000", "-quiet", "-potrf-time", "5ms"}, tc.args...)
		code, stdout, stderr := runKchol(args...)
		if code != 0 {
			t.Fatalf("%v: exit %d: %s", tc.args, code, stderr)
		}
		if !strings.Contains(stdout, tc.want) {
			t.Errorf("%v: output lacks %q:\n%s", tc.args, tc.want, stdout)
		}
		for _, line := range []string{"seconds: ordering ", "factor: ", "GFLOP/s", "memory: estimate "} {
			if !strings.Contains(stdout, line) {
				t.Errorf("%v: output lacks %q", tc.args, line)
			}
		}
	}
	for _, args := range [][]string{
		{"-rho", "3", "-greedy"},
		{"-neighbors", "8", "-joint"},
		{"-neighbors", "8", "-candidates", "20"},
		{"-neighbors", "8", "-greedy", "-candidates", "-1"},
		{"-neighbors", "8", "-greedy", "-candidates", "5"},
	} {
		if code, _, stderr := runKchol(append([]string{"timing", "-n", "100", "-quiet"}, args...)...); code != 2 {
			t.Errorf("%v: exit %d, want 2 (usage error); stderr %q", args, code, stderr)
		}
	}
}
