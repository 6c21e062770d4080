package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/cholesky"
	"github.com/kchol/kchol/kernels"
)

// runKchol runs the command in-process and returns its exit status, stdout and stderr.
func runKchol(args ...string) (int, string, string) {
	var stdout, stderr bytes.Buffer
	code := run(args, &stdout, &stderr)
	return code, stdout.String(), stderr.String()
}

// testPoints returns n points uniform in [0, 1)ᵈ from a fixed seed.
func testPoints(n, d int) []float64 {
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, n*d)
	for i := range x {
		x[i] = rng.Float64()
	}
	return x
}

// writeCSV writes a header and row-major values (cols per row) with %.17g, so that the file
// reads back to exactly these float64s, and returns the path.
func writeCSV(t *testing.T, dir, name string, header []string, values []float64) string {
	t.Helper()
	var b strings.Builder
	b.WriteString(strings.Join(header, ",") + "\n")
	cols := len(header)
	for r := 0; r < len(values)/cols; r++ {
		for c := range cols {
			if c > 0 {
				b.WriteByte(',')
			}
			fmt.Fprintf(&b, "%.17g", values[r*cols+c])
		}
		b.WriteByte('\n')
	}
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// readResult parses a solve output plainly with encoding/csv and strconv.
func readResult(t *testing.T, path string) ([]string, [][]float64) {
	t.Helper()
	file, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer file.Close()
	records, err := csv.NewReader(file).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	cols := make([][]float64, len(records[0]))
	for _, rec := range records[1:] {
		for c, s := range rec {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatal(err)
			}
			cols[c] = append(cols[c], v)
		}
	}
	return records[0], cols
}

// oneLine asserts that s is exactly one line and returns it without the newline.
func oneLine(t *testing.T, what, s string) string {
	t.Helper()
	if strings.Count(s, "\n") != 1 || !strings.HasSuffix(s, "\n") {
		t.Fatalf("%s is not exactly one line: %q", what, s)
	}
	return strings.TrimSuffix(s, "\n")
}

func maxRelativeDifference(a, b []float64) float64 {
	var diff, scale float64
	for i := range a {
		diff = max(diff, math.Abs(a[i]-b[i]))
		scale = max(scale, math.Abs(b[i]))
	}
	return diff / scale
}

func TestMainFactorSolveLogdet(t *testing.T) {
	// The command must give what the library gives on the same data: the points are written
	// with %.17g, so the CLI's factor is computed from the same float64s as the reference
	// built here with cholesky.New, and SolveColumnsTo solves each column as SolveTo does.
	const (
		n, d = 300, 2
		// libraryTolerance: the spec allows bitwise equality or 1e-15 relative.
		libraryTolerance = 1e-15
	)
	dir := t.TempDir()
	points := testPoints(n, d)
	pointsPath := writeCSV(t, dir, "points.csv", []string{"x", "y"}, points)
	rng := rand.New(rand.NewPCG(2, 2))
	rhs := make([]float64, 2*n)
	for i := range rhs {
		rhs[i] = rng.NormFloat64()
	}
	rhsPath := writeCSV(t, dir, "rhs.csv", []string{"first", "second"}, rhs)
	factorPath := filepath.Join(dir, "f.kchol")
	outPath := filepath.Join(dir, "x.csv")

	code, stdout, stderr := runKchol("factor", "-points", pointsPath, "-kernel", "matern32", "-lengthscale", "0.2", "-o", factorPath)
	if code != 0 {
		t.Fatalf("factor: exit %d, stderr %s", code, stderr)
	}
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, Variance: 1, LengthScale: 0.2}
	ref, err := cholesky.New(context.Background(), points, d, k, nil)
	if err != nil {
		t.Fatal(err)
	}
	summary := oneLine(t, "factor stderr", stderr)
	for _, want := range []string{"kchol factor: N = 300, d = 2", fmt.Sprintf("m = %d", cholesky.DefaultNeighbors),
		fmt.Sprintf("nnz = %d (%.1f per column)", ref.NNZ(), float64(ref.NNZ())/n), "read ", "ordering ", "pattern ", "factor ", "write "} {
		if !strings.Contains(summary, want) {
			t.Errorf("factor summary %q lacks %q", summary, want)
		}
	}
	if stdout != "" {
		t.Errorf("factor wrote to stdout: %q", stdout)
	}
	stored, err := cholesky.ReadFile(factorPath)
	if err != nil {
		t.Fatal(err)
	}

	code, _, stderr = runKchol("solve", "-factor", factorPath, "-rhs", rhsPath, "-o", outPath)
	if code != 0 {
		t.Fatalf("solve: exit %d, stderr %s", code, stderr)
	}
	if s := oneLine(t, "solve stderr", stderr); !strings.Contains(s, "kchol solve: N = 300") || !strings.Contains(s, "2 right-hand sides") {
		t.Errorf("solve summary %q", s)
	}
	header, x := readResult(t, outPath)
	if !slices.Equal(header, []string{"first", "second"}) || len(x) != 2 {
		t.Fatalf("output header %q, %d columns", header, len(x))
	}
	for c := range 2 {
		b := make([]float64, n)
		for i := range n {
			b[i] = rhs[2*i+c]
		}
		for name, f := range map[string]*cholesky.Factor{"cholesky.New": ref, "cholesky.ReadFile": stored} {
			want := f.SolveTo(nil, b)
			if e := maxRelativeDifference(x[c], want); e > libraryTolerance {
				t.Errorf("column %d differs from %s + SolveTo by %g relative", c, name, e)
			}
		}
	}

	code, stdout, stderr = runKchol("logdet", "-factor", factorPath)
	if code != 0 {
		t.Fatalf("logdet: exit %d, stderr %s", code, stderr)
	}
	oneLine(t, "logdet stderr", stderr)
	lines := strings.Split(strings.TrimSpace(stdout), "\n")
	got, err := strconv.ParseFloat(lines[len(lines)-1], 64)
	if err != nil {
		t.Fatalf("last line of logdet's output %q: %v", lines[len(lines)-1], err)
	}
	// %.17g reads back to the same float64 (17 significant digits suffice for binary64, IEEE
	// 754-2008 §5.12.2), so the value must equal the library's exactly.
	if got != ref.LogDet() {
		t.Fatalf("logdet printed %v, library %v", got, ref.LogDet())
	}
}

func TestMainFullPatternMatchesDense(t *testing.T) {
	// Reference: gonum's dense mat.Cholesky of Θ built entry by entry with kernels.Stationary
	// Eval (plus the nugget on the diagonal). ρ = 1e9 makes the radius pattern the full lower
	// triangle (every distance in the unit square is below 1e9·ℓⱼ, and the coarsest point has
	// ℓ = +Inf), where the KL-optimal factor is the exact Cholesky factor of Θ⁻¹ (DESIGN.md
	// §4). Both solves are backward stable, so they agree to about cond(Θ)·ε (Higham, Accuracy
	// and Stability of Numerical Algorithms, 2nd ed., §10.1, from memory); the log-determinant
	// is much better conditioned.
	const (
		n = 200
		// solveCondFactor times cond(Θ)·ε bounds the relative difference of the solves; the
		// floor covers well-conditioned cases. Common practice, not a measured number.
		solveCondFactor = 10.0
		solveFloor      = 1e-12
		// logDetTolerance is relative (the spec's ~1e-8).
		logDetTolerance = 1e-8
	)
	cases := []struct {
		family           kernels.Family
		lengthScale      string
		scales           []float64
		variance, nugget float64
		columns          string
	}{
		{kernels.Matern12, "0.1", []float64{0.1}, 1, 0, ""},
		{kernels.Matern32, "0.1,0.25", []float64{0.1, 0.25}, 2.5, 0, "x,y"},
		{kernels.Gaussian, "0.15", []float64{0.15}, 1, 1e-4, "y,x"},
	}
	for _, c := range cases {
		name := fmt.Sprintf("%v/l=%s/variance=%g/nugget=%g/columns=%q/n=%d", c.family, c.lengthScale, c.variance, c.nugget, c.columns, n)
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			xy := testPoints(n, 2)
			// The file has extra columns; -columns picks the coordinates in its order.
			fileValues := make([]float64, 0, 4*n)
			for i := range n {
				fileValues = append(fileValues, float64(i), xy[2*i], 7, xy[2*i+1])
			}
			pointsPath := writeCSV(t, dir, "p.csv", []string{"id", "x", "other", "y"}, fileValues)
			points := xy
			if c.columns == "y,x" {
				points = make([]float64, 2*n)
				for i := range n {
					points[2*i], points[2*i+1] = xy[2*i+1], xy[2*i]
				}
			}
			args := []string{"factor", "-points", pointsPath, "-kernel", c.family.String(), "-lengthscale", c.lengthScale,
				"-variance", fmt.Sprint(c.variance), "-nugget", fmt.Sprint(c.nugget), "-rho", "1e9", "-o", filepath.Join(dir, "f")}
			if c.columns != "" {
				args = append(args, "-columns", c.columns)
			} else {
				// Without -columns every column is a coordinate: use a file of x and y only.
				args[2] = writeCSV(t, dir, "xy.csv", []string{"x", "y"}, xy)
			}
			if code, _, stderr := runKchol(args...); code != 0 {
				t.Fatalf("factor: exit %d: %s", code, stderr)
			}
			k := kernels.Stationary{Family: c.family, Dimension: 2, Variance: c.variance, Nugget: c.nugget}
			if len(c.scales) == 1 {
				k.LengthScale = c.scales[0]
			} else {
				k.LengthScales = c.scales
			}
			theta := mat.NewSymDense(n, nil)
			for i := range n {
				for j := 0; j <= i; j++ {
					v := k.Eval(points[2*i:2*i+2], points[2*j:2*j+2])
					if i == j {
						v += c.nugget
					}
					theta.SetSym(i, j, v)
				}
			}
			var chol mat.Cholesky
			if !chol.Factorize(theta) {
				t.Fatal("dense Θ not positive definite")
			}
			rng := rand.New(rand.NewPCG(3, 3))
			rhs := make([]float64, 2*n)
			for i := range rhs {
				rhs[i] = rng.NormFloat64()
			}
			rhsPath := writeCSV(t, dir, "b.csv", []string{"u", "v"}, rhs)
			outPath := filepath.Join(dir, "x.csv")
			if code, _, stderr := runKchol("solve", "-factor", filepath.Join(dir, "f"), "-rhs", rhsPath, "-o", outPath, "-workers", "2"); code != 0 {
				t.Fatalf("solve: exit %d: %s", code, stderr)
			}
			_, x := readResult(t, outPath)
			tol := max(solveFloor, solveCondFactor*chol.Cond()*0x1p-52)
			for col := range 2 {
				b := mat.NewVecDense(n, nil)
				for i := range n {
					b.SetVec(i, rhs[2*i+col])
				}
				var want mat.VecDense
				if err := chol.SolveVecTo(&want, b); err != nil {
					t.Fatal(err)
				}
				e := maxRelativeDifference(x[col], want.RawVector().Data)
				t.Logf("column %d: relative difference %.3g from the dense solve, tolerance %.3g (cond %.3g)", col, e, tol, chol.Cond())
				if e > tol {
					t.Errorf("column %d: relative difference %g from the dense solve, tolerance %g (cond %g)", col, e, tol, chol.Cond())
				}
			}
			code, stdout, stderr := runKchol("logdet", "-factor", filepath.Join(dir, "f"))
			if code != 0 {
				t.Fatalf("logdet: exit %d: %s", code, stderr)
			}
			lines := strings.Split(strings.TrimSpace(stdout), "\n")
			got, err := strconv.ParseFloat(lines[len(lines)-1], 64)
			if err != nil {
				t.Fatal(err)
			}
			want := chol.LogDet()
			t.Logf("logdet %v, dense %v, relative difference %.3g", got, want, math.Abs(got-want)/math.Abs(want))
			if math.Abs(got-want) > logDetTolerance*math.Abs(want) {
				t.Errorf("logdet %v, dense %v", got, want)
			}
		})
	}
}

func TestMainErrors(t *testing.T) {
	dir := t.TempDir()
	const n = 30
	good := writeCSV(t, dir, "good.csv", []string{"x", "y"}, testPoints(n, 2))
	write := func(name, content string) string {
		path := filepath.Join(dir, name)
		if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
			t.Fatal(err)
		}
		return path
	}
	nonNumeric := write("nonnumeric.csv", "x,y\n0.1,0.2\n0.3,0.4\n0.5,abc\n")
	withNaN := write("nan.csv", "x,y\n0.1,0.2\nNaN,0.4\n")
	fieldCount := write("fields.csv", "x,y\n0.1,0.2\n0.3\n")
	empty := write("empty.csv", "")
	headerOnly := write("header.csv", "x,y\n")
	duplicates := write("dup.csv", "x,y\n0.1,0.2\n0.3,0.4\n0.1,0.2\n")
	factorPath := filepath.Join(dir, "good.kchol")
	if code, _, stderr := runKchol("factor", "-points", good, "-kernel", "matern12", "-lengthscale", "0.3", "-o", factorPath); code != 0 {
		t.Fatalf("setup factor: %s", stderr)
	}
	rhsShort := writeCSV(t, dir, "short.csv", []string{"b"}, make([]float64, n-1))
	rhsBad := write("rhsbad.csv", "b\n"+strings.Repeat("1\n", 5)+"oops\n"+strings.Repeat("1\n", n-6))
	rhsGood := writeCSV(t, dir, "rhs.csv", []string{"b"}, make([]float64, n))
	raw, err := os.ReadFile(factorPath)
	if err != nil {
		t.Fatal(err)
	}
	raw[len(raw)/2] ^= 1
	corrupt := write("corrupt.kchol", string(raw))
	notFactor := write("not.kchol", "this is not a factor file at all, just text\n")
	precious := write("precious.out", "precious")

	out := filepath.Join(dir, "out")
	factor := func(extra ...string) []string {
		args := map[string]string{"-points": good, "-kernel": "matern32", "-lengthscale": "0.3", "-o": out}
		var list []string
		for i := 0; i < len(extra); i += 2 {
			if extra[i+1] == "<omit>" {
				delete(args, extra[i])
				continue
			}
			if _, ok := args[extra[i]]; ok {
				args[extra[i]] = extra[i+1]
				continue
			}
			list = append(list, extra[i], extra[i+1])
		}
		for _, f := range []string{"-points", "-kernel", "-lengthscale", "-o"} {
			if v, ok := args[f]; ok {
				list = append(list, f, v)
			}
		}
		return append([]string{"factor"}, list...)
	}
	cases := []struct {
		name   string
		args   []string
		code   int
		want   []string
		output string // must not exist (or must still hold "precious") after the run
	}{
		{"no command", nil, 2, []string{"no command"}, ""},
		{"unknown command", []string{"frobnicate"}, 2, []string{`unknown command "frobnicate"`}, ""},
		{"missing -points", factor("-points", "<omit>"), 2, []string{"missing -points"}, out},
		{"missing -kernel", factor("-kernel", "<omit>"), 2, []string{"missing -kernel"}, out},
		{"missing -lengthscale", factor("-lengthscale", "<omit>"), 2, []string{"missing -lengthscale"}, out},
		{"missing -o", factor("-o", "<omit>"), 2, []string{"missing -o"}, ""},
		{"unknown kernel", factor("-kernel", "matern72"), 2, []string{"-kernel", `"matern72"`}, out},
		{"lengthscale not a number", factor("-lengthscale", "0.3,abc"), 2, []string{"-lengthscale", `"abc"`}, out},
		{"lengthscale negative", factor("-lengthscale", "-1"), 2, []string{"-lengthscale", "value 1 is -1"}, out},
		{"lengthscale count", factor("-lengthscale", "1,2,3"), 2, []string{"-lengthscale has 3 values", "2 coordinate columns"}, out},
		{"neighbors and rho", factor("-neighbors", "5", "-rho", "2"), 2, []string{"-neighbors and -rho"}, out},
		{"neighbors zero", factor("-neighbors", "0"), 2, []string{"-neighbors 0"}, out},
		{"rho negative", factor("-rho", "-1"), 2, []string{"-rho -1"}, out},
		{"variance zero", factor("-variance", "0"), 2, []string{"-variance 0"}, out},
		{"variance not a number", factor("-variance", "big"), 2, []string{"-variance", `"big"`}, out},
		{"nugget negative", factor("-nugget", "-0.5"), 2, []string{"-nugget -0.5"}, out},
		{"nugget NaN", factor("-nugget", "NaN"), 2, []string{"-nugget NaN"}, out},
		{"workers negative", factor("-workers", "-2"), 2, []string{"-workers -2"}, out},
		{"unknown flag", factor("-frob", "1"), 2, []string{"-frob"}, out},
		{"columns empty name", factor("-columns", "x,,y"), 2, []string{"-columns", "name 2 is empty"}, out},
		{"columns repeated", factor("-columns", "x,x"), 2, []string{"-columns", `"x" is named twice`}, out},
		{"extra argument", append(factor(), "stray"), 2, []string{`unexpected argument "stray"`}, out},
		{"points file missing", factor("-points", filepath.Join(dir, "nosuch.csv")), 1, []string{"nosuch.csv", "no such file"}, out},
		{"non-numeric", factor("-points", nonNumeric), 1, []string{nonNumeric + `: line 4, column 2 ("y"): "abc" is not a number`}, out},
		{"NaN coordinate", factor("-points", withNaN), 1, []string{withNaN + `: line 3, column 1 ("x"): "NaN" is not a finite number`}, out},
		{"wrong field count", factor("-points", fieldCount), 1, []string{fieldCount + `: line 3: 1 fields, the header has 2: column 2 ("y") is missing`}, out},
		{"empty file", factor("-points", empty), 1, []string{empty + ": empty file"}, out},
		{"no data rows", factor("-points", headerOnly), 1, []string{headerOnly + ": no data rows"}, out},
		{"unknown column", factor("-columns", "x,z"), 1, []string{good + `: line 1: no column named "z"`}, out},
		{"duplicate points", factor("-points", duplicates), 1, []string{duplicates, "coincide"}, out},
		{"factor failure keeps existing output", factor("-points", nonNumeric, "-o", precious), 1, []string{"line 4, column 2"}, precious},
		{"solve missing -rhs", []string{"solve", "-factor", factorPath, "-o", out}, 2, []string{"missing -rhs"}, out},
		{"solve missing -o", []string{"solve", "-factor", factorPath, "-rhs", rhsGood}, 2, []string{"missing -o"}, ""},
		{"solve rhs rows", []string{"solve", "-factor", factorPath, "-rhs", rhsShort, "-o", out}, 1, []string{rhsShort + ": 29 data rows (lines 2 to 30), but the factor", "has 30 points"}, out},
		{"solve rhs non-numeric", []string{"solve", "-factor", factorPath, "-rhs", rhsBad, "-o", out}, 1, []string{rhsBad + `: line 7, column 1 ("b"): "oops" is not a number`}, out},
		{"solve corrupted factor", []string{"solve", "-factor", corrupt, "-rhs", rhsGood, "-o", out}, 1, []string{corrupt, "checksum mismatch"}, out},
		{"solve failure keeps existing output", []string{"solve", "-factor", corrupt, "-rhs", rhsGood, "-o", precious}, 1, []string{"checksum mismatch"}, precious},
		{"logdet not a factor", []string{"logdet", "-factor", notFactor}, 1, []string{notFactor, "bad magic"}, ""},
		{"logdet missing -factor", []string{"logdet"}, 2, []string{"missing -factor"}, ""},
		{"logdet missing file", []string{"logdet", "-factor", filepath.Join(dir, "nosuch.kchol")}, 1, []string{"nosuch.kchol", "no such file"}, ""},
	}
	before := dirNames(t, dir)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			code, stdout, stderr := runKchol(c.args...)
			if code != c.code {
				t.Errorf("exit status %d, want %d (stderr %q)", code, c.code, stderr)
			}
			line := oneLine(t, "stderr", stderr)
			if !strings.HasPrefix(line, "kchol: ") {
				t.Errorf("stderr %q does not start with \"kchol: \"", line)
			}
			for _, w := range c.want {
				if !strings.Contains(line, w) {
					t.Errorf("stderr %q lacks %q", line, w)
				}
			}
			if stdout != "" {
				t.Errorf("stdout %q, want nothing", stdout)
			}
			if c.output == precious {
				if b, _ := os.ReadFile(precious); string(b) != "precious" {
					t.Errorf("existing output now holds %q", b)
				}
			} else if c.output != "" {
				if _, err := os.Stat(c.output); !os.IsNotExist(err) {
					t.Errorf("output %s exists after a failed run", c.output)
				}
			}
			if after := dirNames(t, dir); !slices.Equal(after, before) {
				t.Errorf("directory changed from %v to %v", before, after)
			}
		})
	}
}

func dirNames(t *testing.T, dir string) []string {
	t.Helper()
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	return names
}

func TestMainHelp(t *testing.T) {
	for _, args := range [][]string{{"help"}, {"-h"}, {"--help"}} {
		t.Run(strings.Join(args, " "), func(t *testing.T) {
			code, stdout, stderr := runKchol(args...)
			if code != 0 || stderr != "" {
				t.Fatalf("exit %d, stderr %q", code, stderr)
			}
			for _, w := range []string{"kchol factor", "kchol solve", "kchol logdet", "kchol demo", "-points", "-columns", "-kernel",
				"-lengthscale", "-variance", "-nugget", "-neighbors", "-rho", "-workers", "-o ", "-factor", "-rhs"} {
				if !strings.Contains(stdout, w) {
					t.Errorf("usage lacks %q", w)
				}
			}
		})
	}
	for _, c := range commands() {
		t.Run(c.name+" -h", func(t *testing.T) {
			code, stdout, stderr := runKchol(c.name, "-h")
			if code != 0 || stderr != "" || !strings.Contains(stdout, "Usage: kchol "+c.name) {
				t.Fatalf("exit %d, stdout %q, stderr %q", code, stdout, stderr)
			}
		})
	}
}

func TestMainRunDemoDispatch(t *testing.T) {
	// kchol demo hands its arguments to runDemo; an unknown flag must fail cleanly in one
	// stderr line whatever the demo's own flags are.
	code, _, stderr := runKchol("demo", "-no-such-flag-for-any-demo")
	if code == 0 {
		t.Fatal("demo with an unknown flag succeeded")
	}
	if line := oneLine(t, "stderr", stderr); !strings.HasPrefix(line, "kchol: ") {
		t.Fatalf("stderr %q", line)
	}
}
