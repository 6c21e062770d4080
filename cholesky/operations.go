package cholesky

import (
	"context"
	"math"
	"math/rand/v2"
	"runtime"

	"golang.org/x/sync/errgroup"
	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

// In the user's order the factor is M = Π L Πᵀ, where Π maps position p to user index
// order[p]: Θ̃⁻¹ = M Mᵀ. Every method below works with M, so callers never see positions.

// N returns the number of points.
func (f *Factor) N() int { return f.n }

// Dim returns the dimension d of the points.
func (f *Factor) Dim() int { return f.d }

// NNZ returns the number of stored nonzeros of L.
func (f *Factor) NNZ() int { return int(f.colStart[f.n]) }

// Kernel returns the kernel the factor approximates.
func (f *Factor) Kernel() kernels.Kernel { return f.kernel }

// Rho returns ρ of the radius pattern, or 0 for the nearest-neighbour pattern.
func (f *Factor) Rho() float64 { return f.rho }

// Neighbors returns m of the nearest-neighbour pattern, or 0 for the radius pattern.
func (f *Factor) Neighbors() int { return f.neighbors }

// Greedy reports whether the rows were chosen greedily, and among how many candidates.
func (f *Factor) Greedy() (greedy bool, candidates int) { return f.greedy, f.candidates }

// JointGreedy reports whether the greedy sets were chosen per supernode for all its members.
func (f *Factor) JointGreedy() bool { return f.joint }

// Lambda returns the supernode aggregation parameter λ used (1: no aggregation).
func (f *Factor) Lambda() float64 { return f.lambda }

// Supernodes returns the number of supernodes (N without aggregation).
func (f *Factor) Supernodes() int { return len(f.memberStart) - 1 }

// StoredRows returns the number of row indices stored: the summed sizes of the supernodes' row
// sets, which are shared by their members.
func (f *Factor) StoredRows() int { return len(f.rows) }

// Jittered returns the number of columns whose local block needed a diagonal jitter.
func (f *Factor) Jittered() int { return f.jittered }

// Timings returns the wall-clock time of each phase of the construction.
func (f *Factor) Timings() Timings { return f.timings }

// Points returns a copy of the points in the user's order.
func (f *Factor) Points() []float64 {
	out := make([]float64, len(f.points))
	for p, i := range f.order {
		copy(out[i*f.d:(i+1)*f.d], f.point(p))
	}
	return out
}

// Order returns a copy of the ordering: element p is the user index at position p (position 0
// is the finest point).
func (f *Factor) Order() []int { return append([]int(nil), f.order...) }

// LengthScales returns a copy of the maximin length scales by position.
func (f *Factor) LengthScales() []float64 { return append([]float64(nil), f.lengthScale...) }

// LogDet returns log det Θ̃ = −2 Σ log Lⱼⱼ. Cost O(N).
func (f *Factor) LogDet() float64 {
	var s float64
	for j := range f.n {
		s += math.Log(f.colValues(j)[0])
	}
	return -2 * s
}

func (f *Factor) checkLen(v []float64, name string) {
	if len(v) != f.n {
		panic("cholesky: " + name + " has the wrong length")
	}
}

// dstOrNew returns dst, or a new slice of length N when dst is nil; it panics on a wrong length.
func (f *Factor) dstOrNew(dst []float64) []float64 {
	if dst == nil {
		return make([]float64, f.n)
	}
	f.checkLen(dst, "dst")
	return dst
}

// toPositions returns x permuted to positions.
func (f *Factor) toPositions(x []float64) []float64 {
	f.checkLen(x, "input")
	y := make([]float64, f.n)
	for p, i := range f.order {
		y[p] = x[i]
	}
	return y
}

// fromPositions writes y (in positions) to dst in the user's order.
func (f *Factor) fromPositions(dst, y []float64) {
	for p, i := range f.order {
		dst[i] = y[p]
	}
}

// mulL sets y = L x in positions, overwriting y.
func (f *Factor) mulL(y, x []float64) {
	clear(y)
	for j := range f.n {
		xj := x[j]
		if xj == 0 {
			continue
		}
		rows, vals := f.col(j)
		for k, r := range rows {
			y[r] += vals[k] * xj
		}
	}
}

// mulLT sets y = Lᵀ x in positions, overwriting y.
func (f *Factor) mulLT(y, x []float64) {
	for j := range f.n {
		var s float64
		rows, vals := f.col(j)
		for k, r := range rows {
			s += vals[k] * x[r]
		}
		y[j] = s
	}
}

// solveL overwrites x (positions) with L⁻¹ x.
func (f *Factor) solveL(x []float64) {
	for j := range f.n {
		rows, vals := f.col(j)
		xj := x[j] / vals[0]
		x[j] = xj
		for k := 1; k < len(rows); k++ {
			x[rows[k]] -= vals[k] * xj
		}
	}
}

// solveLT overwrites x (positions) with L⁻ᵀ x.
func (f *Factor) solveLT(x []float64) {
	for j := f.n - 1; j >= 0; j-- {
		rows, vals := f.col(j)
		s := x[j]
		for k := 1; k < len(rows); k++ {
			s -= vals[k] * x[rows[k]]
		}
		x[j] = s / vals[0]
	}
}

// MulLTo sets dst = M x and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) MulLTo(dst, x []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := make([]float64, f.n)
	f.mulL(y, f.toPositions(x))
	f.fromPositions(dst, y)
	return dst
}

// MulLTTo sets dst = Mᵀ x and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) MulLTTo(dst, x []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := make([]float64, f.n)
	f.mulLT(y, f.toPositions(x))
	f.fromPositions(dst, y)
	return dst
}

// SolveLTo sets dst = M⁻¹ b and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) SolveLTo(dst, b []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := f.toPositions(b)
	f.solveL(y)
	f.fromPositions(dst, y)
	return dst
}

// SolveLTTo sets dst = M⁻ᵀ b and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) SolveLTTo(dst, b []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := f.toPositions(b)
	f.solveLT(y)
	f.fromPositions(dst, y)
	return dst
}

// SolveTo sets dst = Θ̃⁻¹ b = M (Mᵀ b) and returns dst (allocated when nil). dst and b may be
// the same slice. Cost O(nnz).
func (f *Factor) SolveTo(dst, b []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := f.toPositions(b)
	t := make([]float64, f.n)
	f.mulLT(t, y)
	f.mulL(y, t)
	f.fromPositions(dst, y)
	return dst
}

// MulCovTo sets dst = Θ̃ v = M⁻ᵀ (M⁻¹ v) and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) MulCovTo(dst, v []float64) []float64 {
	dst = f.dstOrNew(dst)
	y := f.toPositions(v)
	f.solveL(y)
	f.solveLT(y)
	f.fromPositions(dst, y)
	return dst
}

// SampleTo sets dst to a draw from N(0, Θ̃), dst = M⁻ᵀ z with z standard normal drawn from
// rng, and returns dst (allocated when nil). Cost O(nnz).
func (f *Factor) SampleTo(dst []float64, rng *rand.Rand) []float64 {
	dst = f.dstOrNew(dst)
	z := make([]float64, f.n)
	for p := range z {
		z[p] = rng.NormFloat64()
	}
	f.solveLT(z)
	f.fromPositions(dst, z)
	return dst
}

// SolveColumnsTo sets each column of dst to Θ̃⁻¹ times the same column of b, the columns
// in parallel on workers goroutines (0 means GOMAXPROCS), and returns dst (allocated when
// nil). It panics if b does not have N rows. Cost O(nnz) per column.
func (f *Factor) SolveColumnsTo(dst *mat.Dense, b mat.Matrix, workers int) *mat.Dense {
	return f.columnsTo(dst, b, workers, f.SolveTo)
}

// MulCovColumnsTo is SolveColumnsTo with Θ̃ in place of Θ̃⁻¹.
func (f *Factor) MulCovColumnsTo(dst *mat.Dense, b mat.Matrix, workers int) *mat.Dense {
	return f.columnsTo(dst, b, workers, f.MulCovTo)
}

func (f *Factor) columnsTo(dst *mat.Dense, b mat.Matrix, workers int, op func(dst, x []float64) []float64) *mat.Dense {
	r, c := b.Dims()
	if r != f.n {
		panic("cholesky: right-hand side has the wrong number of rows")
	}
	if dst == nil {
		dst = mat.NewDense(r, c, nil)
	} else if dr, dc := dst.Dims(); dr != r || dc != c {
		panic("cholesky: dst has the wrong shape")
	}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	g, _ := errgroup.WithContext(context.Background())
	g.SetLimit(workers)
	results := make([][]float64, c)
	for k := range c {
		col := mat.Col(nil, k, b)
		g.Go(func() error {
			results[k] = op(col, col)
			return nil
		})
	}
	_ = g.Wait()
	for k, col := range results {
		dst.SetCol(k, col)
	}
	return dst
}
