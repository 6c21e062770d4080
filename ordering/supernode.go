package ordering

import (
	"fmt"
	"slices"
)

// DefaultLambda is the default aggregation parameter λ of Aggregate.
const DefaultLambda = 1.5

// Supernodes groups the columns of a pattern into supernodes that share one row set.
type Supernodes struct {
	// MemberStart has length S+1; supernode s has the columns
	// Members[MemberStart[s]:MemberStart[s+1]], ascending positions.
	MemberStart []int64
	Members     []int32
	// RowStart has length S+1; supernode s has the row set Rows[RowStart[s]:RowStart[s+1]],
	// the ascending union of its members' pattern columns.
	RowStart []int64
	Rows     []int32
}

// Len returns the number of supernodes S.
func (s *Supernodes) Len() int { return len(s.MemberStart) - 1 }

// MembersOf returns the columns of supernode k, ascending. The slice aliases s.Members.
func (s *Supernodes) MembersOf(k int) []int32 { return s.Members[s.MemberStart[k]:s.MemberStart[k+1]] }

// RowsOf returns the row set of supernode k, ascending. The slice aliases s.Rows.
func (s *Supernodes) RowsOf(k int) []int32 { return s.Rows[s.RowStart[k]:s.RowStart[k+1]] }

// Aggregate groups the columns of p into supernodes (Schäfer, Katzfuss, Owhadi 2021, §3.2;
// DESIGN.md §3): walking positions from the finest, an unassigned column j opens the supernode
// J = {unassigned i ∈ column j of p : ℓᵢ ≤ λ·ℓⱼ}, whose row set is the union of its members'
// columns; member k then owns the rows of that union that are ≥ k, a superset of its own
// column, so the KL divergence can only fall. lambda ≤ 1 gives one supernode per column with
// the pattern's own rows. lengthScale is Ordering.LengthScale. The result is deterministic.
//
// Cost O(Σ_J |J|·m log m) for m rows per column. Panics if the sizes disagree.
func Aggregate(p *Pattern, lengthScale []float64, lambda float64) *Supernodes {
	n := p.N()
	if len(lengthScale) != n {
		panic(fmt.Sprintf("ordering: %d length scales for a pattern of %d columns", len(lengthScale), n))
	}
	out := &Supernodes{MemberStart: []int64{0}, RowStart: []int64{0}}
	if lambda <= 1 {
		out.MemberStart = make([]int64, n+1)
		out.Members = make([]int32, n)
		for j := range n {
			out.MemberStart[j+1] = int64(j + 1)
			out.Members[j] = int32(j)
		}
		out.RowStart = slices.Clone(p.ColStart)
		out.Rows = slices.Clone(p.Rows)
		return out
	}
	assigned := make([]bool, n)
	var union []int32
	for j := range n {
		if assigned[j] {
			continue
		}
		limit := lambda * lengthScale[j]
		first := len(out.Members)
		for _, i := range p.Col(j) {
			if !assigned[i] && lengthScale[i] <= limit {
				assigned[i] = true
				out.Members = append(out.Members, i)
			}
		}
		union = union[:0]
		for _, i := range out.Members[first:] {
			union = append(union, p.Col(int(i))...)
		}
		slices.Sort(union)
		union = slices.Compact(union)
		out.Rows = append(out.Rows, union...)
		out.MemberStart = append(out.MemberStart, int64(len(out.Members)))
		out.RowStart = append(out.RowStart, int64(len(out.Rows)))
	}
	return out
}

// Pattern returns the pattern the supernodes induce: member k of supernode J gets the rows
// of J's row set that are ≥ k.
func (s *Supernodes) Pattern() *Pattern {
	n := len(s.Members)
	counts := make([]int64, n)
	for k := range s.Len() {
		rows := s.RowsOf(k)
		for _, j := range s.MembersOf(k) {
			at, _ := slices.BinarySearch(rows, j)
			counts[j] = int64(len(rows) - at)
		}
	}
	out := &Pattern{ColStart: make([]int64, n+1)}
	for j, c := range counts {
		out.ColStart[j+1] = out.ColStart[j] + c
	}
	out.Rows = make([]int32, out.ColStart[n])
	for k := range s.Len() {
		rows := s.RowsOf(k)
		for _, j := range s.MembersOf(k) {
			at, _ := slices.BinarySearch(rows, j)
			copy(out.Rows[out.ColStart[j]:], rows[at:])
		}
	}
	return out
}
