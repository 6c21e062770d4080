package ordering

import (
	"fmt"
	"math"
	"slices"

	"github.com/kchol/kchol/kernels"
)

// GreedySupernodes returns supernodes whose shared row sets are chosen greedily for all their
// members at once. The members are those of Aggregate on the nearest-neighbour pattern with
// m neighbours and parameter lambda. For a supernode J (ascending positions), the shared set S
// starts empty and grows, m times at most, by the candidate p that most reduces
//
//	log det Cov(y_J | y_S),
//
// among the c points nearest to J's first (finest) member that are coarser than all of J.
// Since S is coarser than J, the chain rule of conditional densities gives
// log det Cov(y_J | y_S) = Σ_{k∈J} log Var(y_k | y_{J, >k}, y_S): exactly the members' share
// of 2·KL (DESIGN.md §4) for the row set U = J ∪ S, each member k owning the rows of U that
// are ≥ k. By the determinant identity
// det Cov(y_J, y_p | S) = det Cov(y_J | S)·Var(y_p | S ∪ J) = Var(y_p | S)·det Cov(y_J | S ∪ {p}),
// the reduction from adding p is log Var(y_p | S) − log Var(y_p | S ∪ J): two conditional
// variances per candidate, each kept by its own partial Cholesky factor (one conditioning on S,
// one on J and then S) with rank-one downdates per pick. Ties go to the lower position;
// candidates whose conditional variance given S ∪ J has fallen to 10⁻¹² of Θₚₚ are skipped.
// c = 0 means DefaultCandidatesPerNeighbor·m. points are in position order, lengthScale is
// Ordering.LengthScale. lambda ≤ 1 makes every supernode a single column, and then the
// selection is the per-column Greedy (the same score, up to rounding of the logarithms).
//
// The idea of choosing a supernode's set jointly is the one Huan, Guinness, Katzfuss, Owhadi
// and Schäfer (2023) describe for aggregated greedy selection; this objective and its update
// are derived as above. Cost per supernode of s members and u candidates: O(u·(s+m)²)
// arithmetic and O(u·(s+m)) kernel evaluations, plus the membership pass and the candidate
// search; supernodes are processed in parallel on s.Workers goroutines and the result is the
// same for any worker count. Panics as Greedy.
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
		out.MemberStart, out.Members = aggregateMembers(s.NearestNeighbors(points, d, m), lengthScale, lambda)
	}
	workers := s.workers()
	sel := jointSelector{
		points: points, d: d, n: n, kernel: k, m: m, c: c, out: out,
		trees: newSuffixTrees(s.search, points, d, n, workers),
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
	// theta[a·s + i] = Θ(slot a, member i).
	theta []float64
	// kernelRow[a] = Θ(slot a, pick).
	kernelRow []float64
	// fa (candidates × m) factors the conditioning on S; fb (slots × (s+m)) on J then S.
	fa, fb []float64
	// vs[a] = Var(y_a | S), vsj[a] = Var(y_a | S ∪ J) for slot a (members: their running
	// conditional variance during the elimination of J).
	vs, vsj  []float64
	eligible []bool
	picked   []int32
	one      [1]int32
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// rowSet appends supernode sn's row set U = J ∪ S, ascending, to dst.
func (g *jointSelector) rowSet(dst []int32, sn int, w *jointWork) []int32 {
	members := g.out.MembersOf(sn)
	s, m, x := len(members), g.m, g.points
	last := int(members[s-1])
	slots := append(w.slots[:0], members...)
	if last < g.n-1 {
		first := int(members[0])
		slots = g.trees.covering(g.n-1-last).knn(slots, x[first*g.d:(first+1)*g.d], g.c, int32(last+1), &w.search)
	}
	w.slots = slots
	total := len(slots)
	width := s + m
	theta := grow(w.theta, total*s)
	w.theta = theta
	w.kernelRow = grow(w.kernelRow, total)
	fa := grow(w.fa, total*m)
	fb := grow(w.fb, total*width)
	w.fa, w.fb = fa, fb
	vs, vsj := grow(w.vs, total), grow(w.vsj, total)
	w.vs, w.vsj = vs, vsj
	eligible := grow(w.eligible, total)
	w.eligible = eligible
	// Θ(slots, members), one column per member.
	for i, j := range members {
		w.one[0] = j
		kernels.FillBlock(g.kernel, w.kernelRow, total, x, w.one[:], slots)
		for a := range total {
			theta[a*s+i] = w.kernelRow[a]
		}
	}
	for a, p := range slots {
		vs[a], vsj[a] = g.prior[p], g.prior[p]
		eligible[a] = a >= s
	}
	// Eliminate the members in order: fb column i is Cov(·, y_{J_i} | J_{<i}) / √Var.
	for i := range s {
		pivot := vsj[i]
		if !(pivot > greedyNegligibleVariance*g.prior[members[i]]) {
			for a := range total {
				fb[a*width+i] = 0 // a member already explained adds no information
			}
			continue
		}
		scale := 1 / math.Sqrt(pivot)
		for a := i + 1; a < total; a++ {
			v := theta[a*s+i]
			for t := range i {
				v -= fb[a*width+t] * fb[i*width+t]
			}
			l := v * scale
			fb[a*width+i] = l
			vsj[a] -= l * l
		}
	}
	w.picked = w.picked[:0]
	for t := range m {
		best, bestScore := -1, math.Inf(-1)
		for a := s; a < total; a++ {
			if !eligible[a] {
				continue
			}
			floor := greedyNegligibleVariance * g.prior[slots[a]]
			if !(vsj[a] > floor) || !(vs[a] > floor) {
				eligible[a] = false // conditional variances only fall: it stays explained
				continue
			}
			score := math.Log(vs[a]) - math.Log(vsj[a])
			if score > bestScore || (score == bestScore && slots[a] < slots[best]) {
				best, bestScore = a, score
			}
		}
		if best < 0 {
			break
		}
		eligible[best] = false
		w.picked = append(w.picked, slots[best])
		// One kernel row against the candidates, then both factors' new columns.
		w.one[0] = slots[best]
		kernels.FillBlock(g.kernel, w.kernelRow[s:], total-s, x, w.one[:], slots[s:])
		scaleA, scaleB := 1/math.Sqrt(vs[best]), 1/math.Sqrt(vsj[best])
		col := s + t
		for a := s; a < total; a++ {
			if !eligible[a] {
				continue
			}
			va, vb := w.kernelRow[a], w.kernelRow[a]
			for r := range t {
				va -= fa[a*m+r] * fa[best*m+r]
			}
			for r := range col {
				vb -= fb[a*width+r] * fb[best*width+r]
			}
			la, lb := va*scaleA, vb*scaleB
			fa[a*m+t], fb[a*width+col] = la, lb
			vs[a] -= la * la
			vsj[a] -= lb * lb
		}
		// The pick's own rows are no longer needed: it is never updated again.
	}
	start := len(dst)
	dst = append(dst, members...)
	dst = append(dst, w.picked...)
	slices.Sort(dst[start:])
	return dst
}
