package main

import (
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"math"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/bench"
	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// demoSiteCount is the number of sites demodata/generate.go writes (its constant sites; also
// stated in demodata/README.md).
const demoSiteCount = 50000

func TestDemoData(t *testing.T) {
	s, err := loadDemoSurvey()
	if err != nil {
		t.Fatal(err)
	}
	if s.n() != demoSiteCount || len(s.points) != 2*demoSiteCount {
		t.Fatalf("%d sites, %d coordinates, want %d sites", s.n(), len(s.points), demoSiteCount)
	}
	// The README's claims: sites in the 120 km × 80 km region, no two coinciding, readings
	// clipped below at 1 µg/m³.
	seen := make(map[[2]float64]int, s.n())
	for i := range s.n() {
		p := [2]float64{s.points[2*i], s.points[2*i+1]}
		if !(p[0] >= 0 && p[0] <= 120 && p[1] >= 0 && p[1] <= 80) {
			t.Fatalf("site %d at %v is outside the region", i, p)
		}
		if j, ok := seen[p]; ok {
			t.Fatalf("sites %d and %d coincide at %v", j, i, p)
		}
		seen[p] = i
		if r := s.readings[i]; !(r >= 1) || math.IsInf(r, 0) {
			t.Fatalf("site %d has reading %v", i, r)
		}
	}
}

func TestDemoSubset(t *testing.T) {
	s, err := loadDemoSurvey()
	if err != nil {
		t.Fatal(err)
	}
	index := make(map[[2]float64]int, s.n())
	for i := range s.n() {
		index[[2]float64{s.points[2*i], s.points[2*i+1]}] = i
	}
	for _, n := range []int{1, 2, 3, 3000, demoSiteCount} {
		t.Run(fmt.Sprintf("n=%d/seed=%d", n, demoSitesSeed), func(t *testing.T) {
			sub := s.subset(n, demoSitesSeed)
			if sub.n() != n {
				t.Fatalf("%d sites, want %d", sub.n(), n)
			}
			drawn := map[int]bool{}
			for k := range n {
				i, ok := index[[2]float64{sub.points[2*k], sub.points[2*k+1]}]
				if !ok || s.readings[i] != sub.readings[k] {
					t.Fatalf("site %d is not a survey site with its reading", k)
				}
				if drawn[i] {
					t.Fatalf("survey site %d drawn twice", i)
				}
				drawn[i] = true
			}
			again := s.subset(n, demoSitesSeed)
			if !slicesEqual(sub.points, again.points) {
				t.Error("the same seed gave a different subset")
			}
		})
	}
}

func slicesEqual(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// TestDemoKLDivergence checks klDivergence against the Gaussian KL divergence computed densely
// with gonum, ½ (tr(Θ̃⁻¹Θ) − N + log det Θ̃ − log det Θ) (handbook formula for two zero-mean
// normals), and against KL = 0 for the exact factor (ρ = ∞, DESIGN.md §4).
func TestDemoKLDivergence(t *testing.T) {
	const n = 300
	points := bench.Uniform(n, 2, 1)
	for i := range points {
		points[i] *= 20 // km, so that the 4 km length scale matters
	}
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, Variance: 2, LengthScale: demoLengthScale, Nugget: demoNugget}
	theta := mat.NewSymDense(n, nil)
	for i := range n {
		for j := i; j < n; j++ {
			v := k.Eval(points[2*i:2*i+2], points[2*j:2*j+2])
			if i == j {
				v += k.Nugget
			}
			theta.SetSym(i, j, v)
		}
	}
	var chol mat.Cholesky
	if !chol.Factorize(theta) {
		t.Fatal("dense kernel matrix not positive definite")
	}
	logDetTheta := chol.LogDet()
	cases := []struct {
		name     string
		settings cholesky.Settings
		// tolerance on |KL − dense KL|: rounding of sums of N = 300 terms of order 1.
		tolerance float64
	}{
		{"neighbors=5", cholesky.Settings{Neighbors: 5}, 1e-8},
		{"rho=2", cholesky.Settings{Rho: 2}, 1e-8},
		{"rho=inf", cholesky.Settings{Rho: math.Inf(1)}, 1e-8},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("n=%d/%s", n, c.name), func(t *testing.T) {
			f, err := cholesky.New(context.Background(), points, 2, k, &c.settings)
			if err != nil {
				t.Fatal(err)
			}
			// Dense M from its columns, Θ̃⁻¹ = M Mᵀ, then the formula with gonum.
			m := mat.NewDense(n, n, nil)
			e := make([]float64, n)
			for j := range n {
				e[j] = 1
				m.SetCol(j, f.MulLTo(nil, e))
				e[j] = 0
			}
			var precision, product mat.Dense
			precision.Mul(m, m.T())
			product.Mul(&precision, theta)
			logDetM, _ := mat.LogDet(m)
			logDetApprox := -2 * logDetM
			want := 0.5 * (mat.Trace(&product) - n + logDetApprox - logDetTheta)
			got, _ := f.KLDivergence(theta, logDetTheta)
			if math.Abs(got-want) > c.tolerance*math.Max(1, math.Abs(want)) {
				t.Errorf("KL = %v, dense formula %v", got, want)
			}
			if got < -c.tolerance {
				t.Errorf("KL = %v < 0 (Gibbs' inequality: KL ≥ 0)", got)
			}
			if c.settings.Rho == math.Inf(1) && math.Abs(got) > c.tolerance {
				t.Errorf("exact factor: KL = %v, want 0", got)
			}
		})
	}
}

// demoRow returns the cells of the first table row of out whose first cell starts with
// prefix, after the line that contains heading.
func demoRow(t *testing.T, out, heading, prefix string) []string {
	t.Helper()
	_, after, ok := strings.Cut(out, heading)
	if !ok {
		t.Fatalf("output has no %q:\n%s", heading, out)
	}
	for _, line := range strings.Split(after, "\n") {
		if !strings.HasPrefix(line, "| ") {
			continue
		}
		cells := strings.Split(strings.Trim(line, "|"), "|")
		for i := range cells {
			cells[i] = strings.TrimSpace(cells[i])
		}
		if strings.HasPrefix(cells[0], prefix) {
			return cells
		}
	}
	t.Fatalf("no row %q after %q:\n%s", prefix, heading, out)
	return nil
}

func parseCell(t *testing.T, cell string) float64 {
	t.Helper()
	v, err := strconv.ParseFloat(strings.TrimSuffix(cell, " s"), 64)
	if err != nil {
		t.Fatalf("cell %q: %v", cell, err)
	}
	return v
}

func TestDemoRun(t *testing.T) {
	sites, dense := 4000, 3000
	if testing.Short() {
		sites, dense = 1500, 1000
	}
	args := []string{"-sites", strconv.Itoa(sites), "-dense", strconv.Itoa(dense), "-workers", "2"}
	t.Run(strings.Join(args, " "), func(t *testing.T) {
		var stdout, stderr bytes.Buffer
		if err := runDemo(args, &stdout, &stderr); err != nil {
			t.Fatalf("runDemo: %v\nstderr:\n%s", err, stderr.String())
		}
		out := stdout.String()
		accuracy := fmt.Sprintf("## Accuracy against dense factors (%d-site random subset)", dense)
		full := fmt.Sprintf("## All %d sites", sites)
		for _, want := range []string{
			accuracy,
			"| pattern | nnz per column | log det rel. error | Θ̃⁻¹y rel. error | KL divergence | sparse time | dense time | ratio |",
			full,
			"These are approximations: check their accuracy on your own data",
		} {
			if !strings.Contains(out, want) {
				t.Errorf("output lacks %q:\n%s", want, out)
			}
		}
		nn := demoRow(t, out, accuracy, "nearest neighbours")
		rho := demoRow(t, out, accuracy, "radius")
		for _, row := range [][]string{nn, rho} {
			if len(row) != 8 {
				t.Fatalf("row %q has %d cells, want 8", row, len(row))
			}
			// Gibbs' inequality: a KL divergence is ≥ 0 (printed to 3 digits).
			if kl := parseCell(t, row[4]); !(kl >= 0) {
				t.Errorf("%s: KL divergence %v, want ≥ 0", row[0], kl)
			}
		}
		// DESIGN.md §1 (measured with a brute-force implementation): at the default pattern
		// the factor gives log det within a few percent; 5 % is the bound the issue asks for.
		const logDetBound = 0.05
		if e := parseCell(t, nn[2]); !(e < logDetBound) || math.IsInf(e, 0) {
			t.Errorf("nearest-neighbour log det relative error %v, want finite and < %v", e, logDetBound)
		}
		// Every column holds j and its m nearest coarser points (all m but in the last m
		// columns, which have fewer coarser points: m(m+1)/2 entries fewer in all); supernodes
		// only add rows. So nnz per column ≥ m + 1 − m(m+1)/(2N), less 0.05 for the printed
		// rounding, and ≤ N.
		m := float64(cholesky.DefaultNeighbors)
		for _, c := range []struct {
			what string
			n    float64
			cell string
		}{{"subset", float64(dense), nn[1]}, {"full run", float64(sites), demoRow(t, out, full, "nearest neighbours")[1]}} {
			low := m + 1 - m*(m+1)/(2*c.n) - 0.05
			if v := parseCell(t, c.cell); !(v >= low && v <= c.n) {
				t.Errorf("%s: nearest-neighbour nnz per column %v, want in [%.2f, %v]", c.what, v, low, c.n)
			}
		}
		fullRho := demoRow(t, out, full, "radius")
		if len(fullRho) != 8 {
			t.Fatalf("full-run row %q has %d cells, want 8", fullRho, len(fullRho))
		}
		for _, cell := range fullRho[2:] {
			if v := parseCell(t, cell); math.IsNaN(v) || math.IsInf(v, 0) {
				t.Errorf("full run: cell %q is not finite", cell)
			}
		}
		if !strings.Contains(stderr.String(), "kchol demo: sparse factor of") {
			t.Errorf("no progress on stderr: %q", stderr.String())
		}
	})
}

func TestDemoFlags(t *testing.T) {
	cases := []struct {
		args []string
		want string
	}{
		{[]string{"-sites", "-1"}, "-sites -1"},
		{[]string{"-sites", "50001"}, "the survey has 50000 sites"},
		{[]string{"-dense", "-2"}, "-dense -2"},
		{[]string{"-workers", "-1"}, "-workers -1"},
		{[]string{"-bogus"}, "bogus"},
		{[]string{"extra"}, "unexpected argument"},
	}
	for _, c := range cases {
		t.Run(strings.Join(c.args, " "), func(t *testing.T) {
			var stdout, stderr bytes.Buffer
			err := runDemo(c.args, &stdout, &stderr)
			var ue usageError
			if !errors.As(err, &ue) || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want a usage error containing %q", err, c.want)
			}
			if stdout.Len() != 0 {
				t.Errorf("stdout not empty on a usage error: %q", stdout.String())
			}
		})
	}
	t.Run("-h", func(t *testing.T) {
		var stdout, stderr bytes.Buffer
		if err := runDemo([]string{"-h"}, &stdout, &stderr); !errors.Is(err, flag.ErrHelp) {
			t.Errorf("error %v, want flag.ErrHelp", err)
		}
		for _, want := range []string{"Usage: kchol demo", "-sites", "-dense", "-workers"} {
			if !strings.Contains(stdout.String(), want) {
				t.Errorf("help lacks %q:\n%s", want, stdout.String())
			}
		}
	})
}
