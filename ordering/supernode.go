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

// Aggregate groups the columns of p into supernodes with the default Settings. See
// Settings.Aggregate.
func Aggregate(p *Pattern, lengthScale []float64, lambda float64) *Supernodes {
	return Settings{}.Aggregate(p, lengthScale, lambda)
}

// aggregateChunk is the number of supernodes whose row sets one task computes.
const aggregateChunk = 1024

// Aggregate groups the columns of p into supernodes (Schäfer, Katzfuss, Owhadi 2021, §3.2;
// DESIGN.md §3): walking positions from the finest, an unassigned column j opens the supernode
// J = {unassigned i ∈ column j of p : ℓᵢ ≤ λ·ℓⱼ}, whose row set is the union of its members'
// columns; member k then owns the rows of that union that are ≥ k, a superset of its own
// column, so the KL divergence can only fall. lambda ≤ 1 gives one supernode per column with
// the pattern's own rows. lengthScale is Ordering.LengthScale.
//
// The membership pass is sequential (it depends on the order of the walk); the row sets are
// then built in parallel on s.Workers goroutines by merging the members' sorted columns, and
// the result is the same for any worker count. Cost O(nnz of the members' columns · min(k, log
// nnz)) time for supernodes of k members, O(N) memory. Panics if the sizes disagree.
func (s Settings) Aggregate(p *Pattern, lengthScale []float64, lambda float64) *Supernodes {
	n := p.N()
	if len(lengthScale) != n {
		panic(fmt.Sprintf("ordering: %d length scales for a pattern of %d columns", len(lengthScale), n))
	}
	workers := s.workers()
	out := &Supernodes{MemberStart: []int64{0}}
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
	out.MemberStart, out.Members = aggregateMembers(p, lengthScale, lambda)
	supernodes := out.Len()
	chunks := (supernodes + aggregateChunk - 1) / aggregateChunk
	rows := make([][]int32, chunks)
	sizes := make([]int64, supernodes)
	if n < patternSerialBelow {
		workers = 1
	}
	// Each chunk merges into a scratch buffer that one worker at a time reuses, and keeps an
	// exact copy (see assemblePattern).
	scratch := make(chan []int32, workers)
	for range workers {
		scratch <- nil
	}
	task := func(c int) {
		buf := <-scratch
		var heads [][]int32
		for sn := c * aggregateChunk; sn < min(supernodes, (c+1)*aggregateChunk); sn++ {
			before := len(buf)
			heads = heads[:0]
			for _, i := range out.MembersOf(sn) {
				heads = append(heads, p.Col(int(i)))
			}
			buf = unionSorted(buf, heads)
			sizes[sn] = int64(len(buf) - before)
		}
		rows[c] = slices.Clone(buf)
		scratch <- buf[:0]
	}
	forEachChunk(chunks, workers, task)
	out.RowStart = make([]int64, supernodes+1)
	for sn, size := range sizes {
		out.RowStart[sn+1] = out.RowStart[sn] + size
	}
	out.Rows = make([]int32, 0, out.RowStart[supernodes])
	for _, buf := range rows {
		out.Rows = append(out.Rows, buf...)
	}
	return out
}

// unionMergeMost is the most lists unionSorted merges by scanning their heads; more are
// concatenated and sorted.
const unionMergeMost = 8

// unionSorted appends to dst the ascending union of the ascending lists (it consumes the
// slices in lists, not their elements). It reads only the lists, sequentially: a marker array
// indexed by row is random access over N entries, which at N = 10⁶ cost more than the merge.
// Cost O(k·u) for k ≤ unionMergeMost lists with a union of u rows, else O(t log t) for t rows
// in all.
func unionSorted(dst []int32, lists [][]int32) []int32 {
	if len(lists) > unionMergeMost {
		before := len(dst)
		for _, l := range lists {
			dst = append(dst, l...)
		}
		slices.Sort(dst[before:])
		return dst[:before+len(slices.Compact(dst[before:]))]
	}
	for {
		next, found := int32(0), false
		for _, l := range lists {
			if len(l) > 0 && (!found || l[0] < next) {
				next, found = l[0], true
			}
		}
		if !found {
			return dst
		}
		dst = append(dst, next)
		for k, l := range lists {
			if len(l) > 0 && l[0] == next {
				lists[k] = l[1:]
			}
		}
	}
}

// aggregateMembers is the membership pass of Aggregate: walking positions from the finest,
// an unassigned column j takes the unassigned rows i of its column with ℓᵢ ≤ λ·ℓⱼ.
//
// When the length scales do not decrease with position (as ReverseMaximin's), ℓᵢ ≤ λ·ℓⱼ
// holds exactly for the positions i up to a bound that only moves forward with j, so the pass
// reads the rows in order up to the bound and never the rows' length scales (random reads at
// large N); the marks are bits. The result is the same either way.
func aggregateMembers(p *Pattern, lengthScale []float64, lambda float64) (memberStart []int64, members []int32) {
	n := p.N()
	assigned := make([]uint64, (n+63)/64)
	taken := func(i int32) bool { return assigned[i>>6]&(1<<(uint(i)&63)) != 0 }
	take := func(i int32) { assigned[i>>6] |= 1 << (uint(i) & 63) }
	memberStart, members = []int64{0}, make([]int32, 0, n)
	sorted := true // ℓ₀ ≤ ℓ₁ ≤ …, with no NaN (which compares false)
	for i := 1; i < n && sorted; i++ {
		sorted = lengthScale[i-1] <= lengthScale[i]
	}
	last := -1 // with sorted length scales: the last position i with ℓᵢ ≤ λ·ℓⱼ
	for j := range n {
		if taken(int32(j)) {
			continue
		}
		limit := lambda * lengthScale[j]
		for sorted && last+1 < n && lengthScale[last+1] <= limit {
			last++
		}
		for _, i := range p.Col(j) {
			if sorted && int(i) > last {
				break // rows ascend, so no later row qualifies
			}
			if !taken(i) && (sorted || lengthScale[i] <= limit) {
				take(i)
				members = append(members, i)
			}
		}
		memberStart = append(memberStart, int64(len(members)))
	}
	return memberStart, members
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
