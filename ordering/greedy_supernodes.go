package ordering

import (
	"fmt"
	"math"
	"slices"

	"github.com/kchol/kchol/kernels"
)

// GreedySupernodes returns supernodes whose shared row sets are chosen greedily for all their
// members at once. The members are those of Aggregate on the nearest-neighbour pattern with
// max(1, m/3) neighbours and parameter lambda (measured on 1500 uniform points, Matérn 1/2
// and 3/2: taking the members from the m-neighbour pattern made supernodes grow with m, and
// KL at equal nonzeros was 5–20 times higher). Member k of a supernode J owns the rows of U = J ∪ S
// that are ≥ k, so its share of 2·KL (DESIGN.md §4) is log Var(y_k | y_{U, >k}). The shared
// set S starts empty and grows, m times at most, by the candidate p that most reduces
//
//	Σ_{k ∈ J, k < p} log Var(y_k | y_{U, >k}),
//
// the members' summed share of 2·KL (members finer than p gain it as a row, the others
// cannot use it), among the c points nearest to J's first (finest) member that are coarser
// than it and not in J. For one member with conditioning set R the reduction from p is
// −log(1 − Cov(y_p, y_k | R)² / (Var(y_p | R)·Var(y_k | R))); each member keeps these
// conditional covariances by its own partial Cholesky factor, first conditioned on the
// members coarser than it, then downdated by rank one per pick. Ties go to the lower position;
// a candidate whose conditional variance has fallen to 10⁻¹² of Θₚₚ for a member counts
// as no gain for it. c = 0 means DefaultCandidatesPerNeighbor·m. points are in position
// order, lengthScale is Ordering.LengthScale. lambda ≤ 1 makes every supernode a single
// column, and then the selection is the per-column Greedy (the same score up to a monotone
// transformation).
//
// Choosing a supernode's set jointly for its members is the idea Huan, Guinness, Katzfuss,
// Owhadi and Schäfer (2023) describe for aggregated greedy selection; this objective and its
// updates are derived as above. Cost per supernode of s members, u candidates and m picks:
// O(s·u·(s+m)·m) arithmetic and O(u·(s+m)) kernel evaluations, plus the membership pass and
// the candidate search; supernodes are processed in parallel on s.Workers goroutines and the
// result is the same for any worker count. Panics as Greedy.
func (s Settings) GreedySupernodes(points []float64, d int, lengthScale []float64, k kernels.Kernel, m, c int, lambda float64) *Supernodes {
	n := checkPoints(points, d)
	switch {
	case k == nil:
		panic("ordering: nil kernel")
	case k.Dim() != d:
		panic(fmt.Sprintf("ordering: kernel dimension %d, points dimension %d", k.Dim(), d))
	case len(lengthScale) != n:
		panic(fmt.Sprintf("ordering: %d length scales for %d points", len(lengthScale), n))
	case m < 1:
		panic(fmt.Sprintf("ordering: m = %d < 1", m))
	case c < 0 || (c > 0 && c < m):
		panic(fmt.Sprintf("ordering: c = %d candidates for m = %d points", c, m))
	}
	if c == 0 {
		c = DefaultCandidatesPerNeighbor * m
	}
	out := &Supernodes{}
	if lambda <= 1 {
		out.MemberStart = make([]int64, n+1)
		out.Members = make([]int32, n)
		for j := range n {
			out.MemberStart[j+1] = int64(j + 1)
			out.Members[j] = int32(j)
		}
	} else {
		out.MemberStart, out.Members = aggregateMembers(s.NearestNeighbors(points, d, max(1, m/3)), lengthScale, lambda)
	}
	workers := s.workers()
	sel := jointSelector{
		points: points, d: d, n: n, kernel: k, m: m, c: c, out: out,
		trees: s.suffixTrees(points, d, n, workers),
		prior: priorVariances(points, k, n, m),
	}
	count := out.Len()
	order := make([]int32, count)
	for sn := range order {
		order[sn] = int32(sn)
	}
	rows := assemblePattern(count, workers, order, greedyChunk, greedySerialBelow, sel.rowSet)
	out.RowStart, out.Rows = rows.ColStart, rows.Rows
	return out
}

// jointSelector holds what every supernode's selection reads.
type jointSelector struct {
	points []float64
	d, n   int
	kernel kernels.Kernel
	m, c   int
	out    *Supernodes
	trees  *suffixTrees
	prior  []float64
}

// jointWork is one goroutine's scratch space, grown on demand and reused.
type jointWork struct {
	search searchWork
	// slots: the members first, then the candidates.
	slots []int32
	// theta[a·s + i] = Θ(slot a, member i); kernelRow[a] = Θ(slot a, pick).
	theta, kernelRow []float64
	// For member i: factor[i] (slots × width) is the partial Cholesky factor of its
	// conditioning, variance[i][a] = Var(y_a | R_i) and cross[i][a] = Cov(y_a, y_k | R_i)
	// for slot a, target[i] = Var(y_k | R_i), columns[i] the factor columns used so far.
	factor, variance, cross []float64
	target                  []float64
	columns                 []int
	eligible                []bool
	picked                  []int32
	one                     [1]int32
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// condition adds slot b (with kernel column kernelCol, Θ(slots, b)) to member i's
// conditioning set: one new column of its partial Cholesky factor, and rank-one downdates of
// its conditional variances and covariances with the target. Slots whose eligible flag is
// false, other than the members, are not updated.
func (w *jointWork) condition(i, b, s, total, width int, kernelCol []float64) {
	col := w.columns[i]
	f := w.factor[i*total*width : (i+1)*total*width]
	variance, cross := w.variance[i*total:(i+1)*total], w.cross[i*total:(i+1)*total]
	pivot := variance[b]
	scale := 1 / math.Sqrt(pivot)
	fb := f[b*width : b*width+col]
	// The target's own entry: slot i.
	li := (kernelCol[i] - dot(f[i*width:i*width+col], fb)) * scale
	for a := range total {
		if a == b || (a >= s && !w.eligible[a]) {
			continue
		}
		l := (kernelCol[a] - dot(f[a*width:a*width+col], fb)) * scale
		f[a*width+col] = l
		variance[a] -= l * l
		cross[a] -= l * li
	}
	f[i*width+col] = li
	w.target[i] -= li * li
	variance[b] = 0 // conditioned on: never again a candidate for this member
	w.columns[i] = col + 1
}

func dot(a, b []float64) float64 {
	b = b[:len(a)]
	var s float64
	for i := range a {
		s += a[i] * b[i]
	}
	return s
}

// rowSet appends supernode sn's row set U = J ∪ S, ascending, to dst.
func (g *jointSelector) rowSet(dst []int32, sn int, w *jointWork) []int32 {
	members := g.out.MembersOf(sn)
	s, m, x := len(members), g.m, g.points
	first := int(members[0])
	slots := append(w.slots[:0], members...)
	if first < g.n-1 {
		// The c+s nearest coarser than the first member, less the members themselves.
		slots = g.trees.covering(g.n-1-first).knn(slots, x[first*g.d:(first+1)*g.d], g.c+s, int32(first+1), &w.search)
		kept := s
		for _, p := range slots[s:] {
			if _, member := slices.BinarySearch(members, p); !member && kept < s+g.c {
				slots[kept] = p
				kept++
			}
		}
		slots = slots[:kept]
	}
	w.slots = slots
	total, width := len(slots), s+m
	w.theta = grow(w.theta, total*s)
	w.kernelRow = grow(w.kernelRow, total)
	w.factor = grow(w.factor, s*total*width)
	w.variance, w.cross = grow(w.variance, s*total), grow(w.cross, s*total)
	w.target, w.columns = grow(w.target, s), grow(w.columns, s)
	w.eligible = grow(w.eligible, total)
	theta := w.theta
	for i, j := range members {
		w.one[0] = j
		kernels.FillBlock(g.kernel, w.kernelRow, total, x, w.one[:], slots)
		for a := range total {
			theta[a*s+i] = w.kernelRow[a]
		}
	}
	for a := range total {
		w.eligible[a] = a >= s
	}
	column := func(i int) []float64 { // Θ(slots, member i), gathered
		col := w.kernelRow[:total]
		for a := range total {
			col[a] = theta[a*s+i]
		}
		return col
	}
	// Member i starts with R_i = the members coarser than it (slots i+1 … s−1).
	for i := range s {
		w.columns[i], w.target[i] = 0, g.prior[members[i]]
		variance, cross := w.variance[i*total:(i+1)*total], w.cross[i*total:(i+1)*total]
		for a := range total {
			variance[a], cross[a] = g.prior[slots[a]], theta[a*s+i]
		}
		for q := i + 1; q < s; q++ {
			if variance[q] > greedyNegligibleVariance*g.prior[members[q]] {
				w.condition(i, q, s, total, width, column(q))
			}
		}
	}
	w.picked = w.picked[:0]
	for range m {
		best, bestScore := -1, 0.0
		for a := s; a < total; a++ {
			if !w.eligible[a] {
				continue
			}
			p := slots[a]
			floor := greedyNegligibleVariance * g.prior[p]
			var score float64
			useful := false
			for i := range s {
				if members[i] >= p {
					break // members are ascending: the rest are coarser than p
				}
				v, c := w.variance[i*total+a], w.cross[i*total+a]
				if !(v > floor) || !(w.target[i] > 0) {
					continue
				}
				useful = true
				if r := c * c / (v * w.target[i]); r < 1 {
					score -= math.Log1p(-r)
				}
			}
			if !useful {
				w.eligible[a] = false // explained for every member that could use it
				continue
			}
			if best < 0 || score > bestScore || (score == bestScore && p < slots[best]) {
				best, bestScore = a, score
			}
		}
		if best < 0 {
			break
		}
		w.eligible[best] = false
		p := slots[best]
		w.picked = append(w.picked, p)
		w.one[0] = p
		kernels.FillBlock(g.kernel, w.kernelRow, total, x, w.one[:], slots)
		for i := range s {
			if members[i] >= p {
				break
			}
			if w.variance[i*total+best] > greedyNegligibleVariance*g.prior[p] {
				w.condition(i, best, s, total, width, w.kernelRow)
			}
		}
	}
	start := len(dst)
	dst = append(dst, members...)
	dst = append(dst, w.picked...)
	slices.Sort(dst[start:])
	return dst
}
