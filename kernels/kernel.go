package kernels

// Kernel is a covariance function on ℝᵈ.
type Kernel interface {
	// Dim returns the dimension d of the points.
	Dim() int
	// Eval returns k(x, y) for points x and y of length Dim. It does not include any nugget:
	// the nugget belongs to the matrix diagonal, not to the function.
	Eval(x, y []float64) float64
}

// Nuggeted is implemented by kernels whose Gram matrix carries a nugget (a variance added
// to every diagonal entry, Θᵢᵢ = k(xᵢ, xᵢ) + nugget).
type Nuggeted interface {
	NuggetVariance() float64
}

// BlockFiller is the fast path for filling blocks of the Gram matrix. Points x are flat and
// row-major with Dim columns; rows, cols and idx index points of x.
type BlockFiller interface {
	Kernel
	// FillBlock sets dst[a*stride+b] = Θ[rows[a], cols[b]], the nugget included where
	// rows[a] == cols[b].
	FillBlock(dst []float64, stride int, x []float64, rows, cols []int32)
	// FillLower sets dst[a*stride+b] = Θ[idx[a], idx[b]] for b ≤ a, the nugget included on
	// the diagonal, and leaves the strict upper triangle untouched.
	FillLower(dst []float64, stride int, x []float64, idx []int32)
}

// NuggetOf returns the nugget of k, or 0 if k has none.
func NuggetOf(k Kernel) float64 {
	if n, ok := k.(Nuggeted); ok {
		return n.NuggetVariance()
	}
	return 0
}

// FillBlock sets dst[a*stride+b] = Θ[rows[a], cols[b]] for the points x, the nugget included
// where rows[a] == cols[b]. It uses k's BlockFiller fast path when there is one.
// It panics if dst is too short. Cost O(len(rows)·len(cols)·d).
func FillBlock(k Kernel, dst []float64, stride int, x []float64, rows, cols []int32) {
	checkBlock(len(dst), stride, len(rows), len(cols))
	if f, ok := k.(BlockFiller); ok {
		f.FillBlock(dst, stride, x, rows, cols)
		return
	}
	d := k.Dim()
	nugget := NuggetOf(k)
	for a, i := range rows {
		xi := x[int(i)*d : int(i)*d+d]
		row := dst[a*stride : a*stride+len(cols)]
		for b, j := range cols {
			v := k.Eval(xi, x[int(j)*d:int(j)*d+d])
			if i == j {
				v += nugget
			}
			row[b] = v
		}
	}
}

// FillLower sets dst[a*stride+b] = Θ[idx[a], idx[b]] for b ≤ a, the nugget included on the
// diagonal; the strict upper triangle is left untouched. It uses k's BlockFiller fast path when
// there is one. It panics if dst is too short. Cost O(len(idx)²·d/2).
func FillLower(k Kernel, dst []float64, stride int, x []float64, idx []int32) {
	checkBlock(len(dst), stride, len(idx), len(idx))
	if f, ok := k.(BlockFiller); ok {
		f.FillLower(dst, stride, x, idx)
		return
	}
	d := k.Dim()
	nugget := NuggetOf(k)
	for a, i := range idx {
		xi := x[int(i)*d : int(i)*d+d]
		for b, j := range idx[:a+1] {
			v := k.Eval(xi, x[int(j)*d:int(j)*d+d])
			if a == b {
				v += nugget
			}
			dst[a*stride+b] = v
		}
	}
}

func checkBlock(n, stride, rows, cols int) {
	if rows == 0 || cols == 0 {
		return
	}
	if stride < cols {
		panic("kernels: stride smaller than the number of columns")
	}
	if n < (rows-1)*stride+cols {
		panic("kernels: destination too short")
	}
}
