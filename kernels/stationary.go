package kernels

import (
	"fmt"
	"math"
	"strings"
)

// Family names a stationary covariance function of the scaled distance r.
type Family uint8

// The families of Stationary. Forms from Rasmussen & Williams 2006 (GPML), with r the distance
// scaled by the length scale(s):
//
//	Matern12:  σ² exp(−r)                          (eq. 4.14 at ν = 1/2)
//	Matern32:  σ² (1 + √3 r) exp(−√3 r)             (eq. 4.17)
//	Matern52:  σ² (1 + √5 r + 5r²/3) exp(−√5 r)     (eq. 4.17)
//	Gaussian:  σ² exp(−r²/2)                       (eq. 4.9, squared exponential)
const (
	Matern12 Family = iota + 1
	Matern32
	Matern52
	Gaussian
)

var familyNames = [...]string{Matern12: "matern12", Matern32: "matern32", Matern52: "matern52", Gaussian: "gaussian"}

// String returns the family's name as the command line spells it ("matern32").
func (f Family) String() string {
	if f >= Matern12 && f <= Gaussian {
		return familyNames[f]
	}
	return fmt.Sprintf("Family(%d)", uint8(f))
}

// ParseFamily returns the family named s (matern12, matern32, matern52, gaussian; case is
// ignored), or an error that lists the names.
func ParseFamily(s string) (Family, error) {
	for f := Matern12; f <= Gaussian; f++ {
		if strings.EqualFold(s, familyNames[f]) {
			return f, nil
		}
	}
	return 0, fmt.Errorf("kernels: unknown kernel %q (want matern12, matern32, matern52 or gaussian)", s)
}

// Stationary is a stationary covariance function k(x, y) = σ² f(r) of the scaled distance
// r = ‖(x − y)/ℓ‖, with one length scale or one per dimension, and an optional nugget added
// to the diagonal of the Gram matrix.
type Stationary struct {
	// Family selects f; it must be set.
	Family Family
	// Dimension is d. It may be 0 when LengthScales is set; then d = len(LengthScales).
	Dimension int
	// Variance is σ² = k(x, x). 0 means 1.
	Variance float64
	// LengthScale is ℓ in every dimension; used when LengthScales is nil. It must be > 0.
	LengthScale float64
	// LengthScales, when not nil, gives one length scale per dimension.
	LengthScales []float64
	// Nugget is added to every diagonal entry of the Gram matrix. 0 means none.
	Nugget float64
}

var _ BlockFiller = Stationary{}
var _ Nuggeted = Stationary{}

// Validate returns an error describing the first invalid parameter, or nil.
func (k Stationary) Validate() error {
	switch {
	case k.Family < Matern12 || k.Family > Gaussian:
		return fmt.Errorf("kernels: unknown family %d", k.Family)
	case k.LengthScales == nil && k.Dimension < 1:
		return fmt.Errorf("kernels: dimension %d, want ≥ 1", k.Dimension)
	case k.LengthScales != nil && k.Dimension != 0 && k.Dimension != len(k.LengthScales):
		return fmt.Errorf("kernels: %d length scales for dimension %d", len(k.LengthScales), k.Dimension)
	case k.LengthScales == nil && !(k.LengthScale > 0 && !math.IsInf(k.LengthScale, 0)):
		return fmt.Errorf("kernels: length scale %v, want a finite value > 0", k.LengthScale)
	case k.Variance < 0 || math.IsNaN(k.Variance) || math.IsInf(k.Variance, 0):
		return fmt.Errorf("kernels: variance %v, want a finite value > 0", k.Variance)
	case k.Nugget < 0 || math.IsNaN(k.Nugget) || math.IsInf(k.Nugget, 0):
		return fmt.Errorf("kernels: nugget %v, want a finite value ≥ 0", k.Nugget)
	}
	for i, l := range k.LengthScales {
		if !(l > 0 && !math.IsInf(l, 0)) {
			return fmt.Errorf("kernels: length scale %d is %v, want a finite value > 0", i, l)
		}
	}
	return nil
}

// Dim returns d.
func (k Stationary) Dim() int {
	if k.LengthScales != nil {
		return len(k.LengthScales)
	}
	return k.Dimension
}

// NuggetVariance returns the nugget.
func (k Stationary) NuggetVariance() float64 { return k.Nugget }

func (k Stationary) variance() float64 {
	if k.Variance == 0 {
		return 1
	}
	return k.Variance
}

// appendInverseScales appends 1/ℓ per dimension to dst. Callers pass a stack array so that
// block filling allocates nothing for d ≤ 4.
func (k Stationary) appendInverseScales(dst []float64) []float64 {
	for i := range k.Dim() {
		if k.LengthScales != nil {
			dst = append(dst, 1/k.LengthScales[i])
		} else {
			dst = append(dst, 1/k.LengthScale)
		}
	}
	return dst
}

// Profile returns σ² f(r) for the scaled distance r ≥ 0.
func (k Stationary) Profile(r float64) float64 {
	return k.variance() * profile(k.Family, r*r)
}

// Eval returns k(x, y), without the nugget. It panics if x or y is not of length Dim.
// Eval is the slow path (it allocates nothing but recomputes 1/ℓ); fill blocks instead.
func (k Stationary) Eval(x, y []float64) float64 {
	d := k.Dim()
	if len(x) != d || len(y) != d {
		panic("kernels: point length does not match the dimension")
	}
	var r2 float64
	for i := range d {
		l := k.LengthScale
		if k.LengthScales != nil {
			l = k.LengthScales[i]
		}
		t := (x[i] - y[i]) / l
		r2 += t * t
	}
	return k.variance() * profile(k.Family, r2)
}

// profile returns f at squared scaled distance r2.
func profile(f Family, r2 float64) float64 {
	switch f {
	case Matern12:
		return math.Exp(-math.Sqrt(r2))
	case Matern32:
		s := math.Sqrt(3 * r2)
		return (1 + s) * math.Exp(-s)
	case Matern52:
		s := math.Sqrt(5 * r2)
		return (1 + s + s*s/3) * math.Exp(-s)
	case Gaussian:
		return math.Exp(-r2 / 2)
	}
	panic("kernels: unknown family")
}

// FillBlock implements BlockFiller. Cost O(len(rows)·len(cols)·d).
func (k Stationary) FillBlock(dst []float64, stride int, x []float64, rows, cols []int32) {
	checkBlock(len(dst), stride, len(rows), len(cols))
	var invBuf [4]float64
	var scratch [profileChunk]float64
	inv, v := k.appendInverseScales(invBuf[:0]), k.variance()
	for a, i := range rows {
		row := dst[a*stride : a*stride+len(cols)]
		sqDistances(row, x, inv, i, cols)
		applyProfile(k.Family, v, row, scratch[:])
		if k.Nugget != 0 {
			for b, j := range cols {
				if i == j {
					row[b] += k.Nugget
				}
			}
		}
	}
}

// FillLower implements BlockFiller. Cost O(len(idx)²·d/2).
func (k Stationary) FillLower(dst []float64, stride int, x []float64, idx []int32) {
	checkBlock(len(dst), stride, len(idx), len(idx))
	var invBuf [4]float64
	var scratch [profileChunk]float64
	inv, v := k.appendInverseScales(invBuf[:0]), k.variance()
	d := len(inv)
	// Gather the block's points, scaled by 1/ℓ, into a contiguous local array when they fit
	// on the stack: the distance loop then reads one small array in order instead of points
	// scattered over x, and skips the scaling.
	var local [localPoints]float64
	if d <= 3 && len(idx)*d <= localPoints {
		scaled := local[:len(idx)*d]
		for a, i := range idx {
			for c := range d {
				scaled[a*d+c] = x[int(i)*d+c] * inv[c]
			}
		}
		for a := range idx {
			row := dst[a*stride : a*stride+a+1]
			sqDistancesLocal(row, scaled, d, a)
			applyProfile(k.Family, v, row, scratch[:])
			row[a] += k.Nugget
		}
		return
	}
	for a, i := range idx {
		row := dst[a*stride : a*stride+a+1]
		sqDistances(row, x, inv, i, idx[:a+1])
		applyProfile(k.Family, v, row, scratch[:])
		row[a] += k.Nugget
	}
}

// localPoints is the number of coordinates FillLower gathers on the stack (8 KiB).
const localPoints = 1024

// sqDistancesLocal sets dst[b] = ‖y_a − y_b‖² for b < len(dst), for the contiguous scaled
// points y of dimension d ≤ 3.
func sqDistancesLocal(dst, y []float64, d, a int) {
	switch d {
	case 1:
		ya := y[a]
		for b := range dst {
			t := ya - y[b]
			dst[b] = t * t
		}
	case 2:
		ya0, ya1 := y[2*a], y[2*a+1]
		y = y[:2*len(dst)]
		for b := range dst {
			t0 := ya0 - y[2*b]
			t1 := ya1 - y[2*b+1]
			dst[b] = t0*t0 + t1*t1
		}
	case 3:
		ya0, ya1, ya2 := y[3*a], y[3*a+1], y[3*a+2]
		y = y[:3*len(dst)]
		for b := range dst {
			t0 := ya0 - y[3*b]
			t1 := ya1 - y[3*b+1]
			t2 := ya2 - y[3*b+2]
			dst[b] = t0*t0 + t1*t1 + t2*t2
		}
	}
}

// sqDistances sets dst[b] = ‖(x_i − x_cols[b]) ⊙ inv‖².
func sqDistances(dst, x, inv []float64, i int32, cols []int32) {
	d := len(inv)
	switch d {
	case 1:
		xi := x[i] * inv[0]
		for b, j := range cols {
			t := xi - x[j]*inv[0]
			dst[b] = t * t
		}
	case 2:
		i0, i1 := inv[0], inv[1]
		xi := x[2*int(i) : 2*int(i)+2]
		x0, x1 := xi[0], xi[1]
		for b, j := range cols {
			xj := x[2*int(j) : 2*int(j)+2]
			t0 := (x0 - xj[0]) * i0
			t1 := (x1 - xj[1]) * i1
			dst[b] = t0*t0 + t1*t1
		}
	case 3:
		i0, i1, i2 := inv[0], inv[1], inv[2]
		xi := x[3*int(i) : 3*int(i)+3]
		x0, x1, x2 := xi[0], xi[1], xi[2]
		for b, j := range cols {
			xj := x[3*int(j) : 3*int(j)+3]
			t0 := (x0 - xj[0]) * i0
			t1 := (x1 - xj[1]) * i1
			t2 := (x2 - xj[2]) * i2
			dst[b] = t0*t0 + t1*t1 + t2*t2
		}
	default:
		xi := x[d*int(i) : d*int(i)+d]
		for b, j := range cols {
			xj := x[d*int(j) : d*int(j)+d]
			var s float64
			for c, w := range inv {
				t := (xi[c] - xj[c]) * w
				s += t * t
			}
			dst[b] = s
		}
	}
}

// profileChunk is the scratch length the filling loops pass to applyProfile.
const profileChunk = 256

// applyProfile replaces each squared scaled distance in row by v·f(r), in chunks of
// len(scratch) entries: first the arguments of the exponential into scratch, then the
// exponentials of a whole chunk at once (expNegatives), then the polynomial factor.
func applyProfile(f Family, v float64, row, scratch []float64) {
	for len(row) > 0 {
		c := row[:min(len(row), len(scratch))]
		s := scratch[:len(c)]
		switch f {
		case Matern12:
			sqrtScaled(s, c, 1)
			expNegatives(c, s)
			for b, e := range c {
				c[b] = v * e
			}
		case Matern32:
			sqrtScaled(s, c, 3)
			expNegatives(c, s)
			for b, t := range s {
				c[b] = v * (1 + t) * c[b]
			}
		case Matern52:
			sqrtScaled(s, c, 5)
			expNegatives(c, s)
			for b, t := range s {
				c[b] = v * (1 + t + t*t/3) * c[b]
			}
		case Gaussian:
			for b, r2 := range c {
				s[b] = r2 / 2
			}
			expNegatives(c, s)
			for b, e := range c {
				c[b] = v * e
			}
		default:
			panic("kernels: unknown family")
		}
		row = row[len(c):]
	}
}
