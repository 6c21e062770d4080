package cholesky

import (
	"context"
	"fmt"
	"runtime"
	"sync/atomic"

	"golang.org/x/sync/errgroup"
	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
)

// Tile sizes of the matrix-free product: one tile of exactRowsPerTile × exactColsPerTile
// kernel entries (64 × 512 float64 = 256 KiB) stays in a core's L2 cache while it is used.
const (
	exactRowsPerTile = 64
	exactColsPerTile = 512
	// exactSerialRows is the size below which KernelMatrix.MulVecTo runs on one goroutine.
	exactSerialRows = 512
)

// KernelMatrix is the exact N×N kernel matrix Θᵢⱼ = k(xᵢ, xⱼ) (+ nugget on the diagonal) of a
// set of points, held matrix-free: it stores the points and the kernel, never the N² entries,
// and computes entries on the fly. It implements gonum's mat.Symmetric, so it drops into gonum
// code (each At costs one kernel evaluation). A KernelMatrix is read-only and safe for
// concurrent use.
type KernelMatrix struct {
	n, d   int
	kernel kernels.Kernel
	points []float64
	// index[i] = i, the int32 index lists handed to kernels.FillBlock.
	index []int32
}

var _ mat.Symmetric = (*KernelMatrix)(nil)

// NewKernelMatrix returns the matrix-free kernel matrix of the points (flat, row-major, d per
// point; copied, never modified) under k. It panics if d does not match k.Dim(), if
// len(points) is not a multiple of d, or if there are 2³¹ or more points. Cost O(N d).
func NewKernelMatrix(points []float64, d int, k kernels.Kernel) *KernelMatrix {
	if d < 1 || len(points)%d != 0 {
		panic("cholesky: len(points) is not a multiple of d ≥ 1")
	}
	if k.Dim() != d {
		panic(fmt.Sprintf("cholesky: kernel dimension %d, points dimension %d", k.Dim(), d))
	}
	n := len(points) / d
	if int64(n) >= 1<<31 {
		panic("cholesky: too many points for a kernel matrix")
	}
	m := &KernelMatrix{n: n, d: d, kernel: k, points: append([]float64(nil), points...), index: make([]int32, n)}
	for i := range m.index {
		m.index[i] = int32(i)
	}
	return m
}

// KernelMatrix returns the exact matrix-free kernel matrix Θ of the factor's points and
// kernel, in the user's order. Cost O(N d).
func (f *Factor) KernelMatrix() *KernelMatrix {
	return NewKernelMatrix(f.Points(), f.Dim(), f.Kernel())
}

// Dims returns N, N.
func (m *KernelMatrix) Dims() (r, c int) { return m.n, m.n }

// SymmetricDim returns N.
func (m *KernelMatrix) SymmetricDim() int { return m.n }

// T returns m itself: Θ is symmetric.
func (m *KernelMatrix) T() mat.Matrix { return m }

// At returns Θᵢⱼ, the nugget included when i == j. It panics if i or j is out of range.
// Cost one kernel evaluation.
func (m *KernelMatrix) At(i, j int) float64 {
	if i < 0 || i >= m.n || j < 0 || j >= m.n {
		panic("cholesky: kernel matrix index out of range")
	}
	var v [1]float64
	kernels.FillBlock(m.kernel, v[:], 1, m.points, m.index[i:i+1], m.index[j:j+1])
	return v[0]
}

// MulVecTo sets dst = Θ v exactly (to rounding) and returns dst (allocated when nil). The
// kernel entries are computed in tiles of 64 × 512 with kernels.FillBlock and used at once;
// nothing of size N² is stored. Blocks of 64 rows are distributed over workers goroutines
// (0 means GOMAXPROCS; one goroutine below 512 points); each block sums its tiles in a fixed
// order, so the result is the same bits for any number of workers. dst and v must not
// overlap. It returns ctx.Err() if ctx is cancelled (checked between row blocks), and panics
// if v or dst does not have length N. Cost O(N² d) time (every entry is computed once),
// O(workers · 32 Ki) memory.
func (m *KernelMatrix) MulVecTo(ctx context.Context, dst, v []float64, workers int) ([]float64, error) {
	if len(v) != m.n {
		panic("cholesky: vector has the wrong length")
	}
	if dst == nil {
		dst = make([]float64, m.n)
	} else if len(dst) != m.n {
		panic("cholesky: dst has the wrong length")
	}
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	blocks := (m.n + exactRowsPerTile - 1) / exactRowsPerTile
	if m.n < exactSerialRows {
		workers = 1
	}
	workers = max(1, min(workers, blocks))
	var next atomic.Int64
	g, ctx := errgroup.WithContext(ctx)
	for range workers {
		g.Go(func() error {
			tile := make([]float64, exactRowsPerTile*exactColsPerTile)
			for {
				blk := int(next.Add(1) - 1)
				if blk >= blocks {
					return nil
				}
				if err := ctx.Err(); err != nil {
					return err
				}
				m.mulRowBlock(dst, v, blk, tile)
			}
		})
	}
	if err := g.Wait(); err != nil {
		return nil, err
	}
	return dst, nil
}

// mulRowBlock sets dst[r0:r1] = Θ[r0:r1, :] v for row block blk, summing the column tiles
// left to right and each row of a tile left to right.
func (m *KernelMatrix) mulRowBlock(dst, v []float64, blk int, tile []float64) {
	r0, r1 := blk*exactRowsPerTile, min(m.n, (blk+1)*exactRowsPerTile)
	out := dst[r0:r1]
	clear(out)
	rows := m.index[r0:r1]
	for c0 := 0; c0 < m.n; c0 += exactColsPerTile {
		c1 := min(m.n, c0+exactColsPerTile)
		w := c1 - c0
		kernels.FillBlock(m.kernel, tile, w, m.points, rows, m.index[c0:c1])
		vc := v[c0:c1]
		for a := range out {
			row := tile[a*w : a*w+w]
			var s float64
			for b, t := range row {
				s += t * vc[b]
			}
			out[a] += s
		}
	}
}
