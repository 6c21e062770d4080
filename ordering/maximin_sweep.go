package ordering

import "math"

// sweepAfter sets where the tournament hands over to sweeps: once 1/sweepAfter of the points
// are picked (on several workers: once the first region has picked 1/sweepAfter of its points).
// Measured on uniform points in the unit square. With a first version of the sweeps (checks
// from the root), serial, 2 runs each: handing over after 5 %, 10 %, 15 % and 25 % of the picks
// took 2.94, 2.42–2.69, 2.50 and 2.37–2.46 s at 10⁶ points, and 0.28–0.30, 0.22, 0.22 and
// 0.19–0.20 s at 10⁵. With this version on 2 workers, 2 runs each (4 at 25 %), 1/3, 1/4 and 1/6
// were within the noise of each other: 0.96–1.23, 0.95–1.16 and 0.97–1.14 s at 10⁶.
const sweepAfter = 4

// sweepMinShare: the sweeps stop once a round picks fewer than 1/sweepMinShare of the points it
// found unpicked; the tournament picks the rest.
const sweepMinShare = 8

// The sweeps.
//
// A point q with current distance v may be picked out of turn, with length scale v, as soon as
// no unpicked point within v of q (computed distance < v) comes before q by the current
// (distance descending, index ascending) order. Then q's length scale is final: a point picked
// before q in the serial order can lower it only from within v; the picked ones have been
// applied, and the unpicked ones within v come after q by their current distances, which only
// decrease, so also in the serial order. And q's pick, which lowers distances to it below v only
// (as tournament.update with within = v), changes what it changes in the serial order: the
// unpicked points within v all come after q; a point p picked already that comes after q in
// the serial order lay at least ℓ_p from q, or p's own check would have found q (unpicked, and
// before p by its distance then, which was at least its final one), so q does not change ℓ_p.
// The serial order itself is recovered by sorting the picks by (length scale descending, index
// ascending), which is how the serial tournament picks.
//
// At the coarse end almost every point has a better one within its distance, so the tournament
// runs first. Once a quarter of the points are picked, most of the rest pass the check: on 10⁵
// uniform points in the unit square 58 % of them did as they stood, and one sweep, which also
// sees its own picks, picked 75 %; on 10⁶, three more rounds left 51 of the 750,000. A sweep
// visits the points in slot order, so its checks and updates read memory that the previous
// point's have just read, where the tournament's picks jump about the whole tree: serial
// ReverseMaximin cost 1.35 µs per pick at 10⁴ and 10⁵ points, 2.3 µs at 10⁶.

// sweep visits the unpicked points below node root in slot order and picks every one that
// passes the check, appending it to late. A point whose ball (radius its distance) no node on
// its path at or below root holds strictly inside is left for the caller and appended to
// border, unless root is the tree's root or a point below root blocks it. Node bests are left stale: every node's best stays an
// upper bound on the points below it, which is all that the check and update need; refresh
// them before the tournament reads them again. Only points and nodes below root are read or
// written, so sweeps of disjoint subtrees can run concurrently.
func (m *tournament) sweep(root int32, late []tournamentBest, border []int32, path []int32) ([]tournamentBest, []int32, []int32) {
	t := m.t
	d := t.d
	ball := make([]float64, 2*d)
	path = append(path[:0], root)
	// Walk the subtree in pre-order with an explicit path: path holds the nodes from root to
	// the current one.
	b := root
	for {
		node := &m.nodes[b]
		if node.right >= 0 && node.slot >= 0 {
			b++
			path = append(path, b)
			continue
		}
		if node.right < 0 {
			fn := t.nodes[b]
			for s := fn.start; s < fn.end; s++ {
				v := m.dist[s]
				if math.IsInf(v, -1) {
					continue
				}
				q := tournamentBest{v, s, t.index[s]}
				x := t.coords[int(s)*d : int(s+1)*d]
				from := root
				if v > 0 {
					ballExtent(ball, x, v)
					k := len(path) - 1
					for k >= 0 && !t.holdsBall(path[k], ball) {
						k--
					}
					if k >= 0 {
						from = path[k]
					} else if root != 0 {
						// Blocked by a point of this subtree is blocked; only the others need
						// the check across the subtree's faces.
						if !m.blocked(root, x, q) {
							border = append(border, s)
						}
						continue
					}
					if m.blocked(from, x, q) {
						continue
					}
				}
				late = m.pickOutOfTurn(late, from, q, x)
			}
		}
		// Climb to the first ancestor whose right child is not yet visited.
		for {
			if len(path) == 1 {
				return late, border, path
			}
			child := path[len(path)-1]
			path = path[:len(path)-1]
			parent := path[len(path)-1]
			if right := m.nodes[parent].right; child != right {
				b = right
				path = append(path, b)
				break
			}
		}
	}
}

// pickOutOfTurn picks q (at x), which has passed the check, updating from node from, whose box
// holds q's ball.
func (m *tournament) pickOutOfTurn(late []tournamentBest, from int32, q tournamentBest, x []float64) []tournamentBest {
	late = append(late, q)
	m.dist[q.slot] = math.Inf(-1)
	if q.dist > 0 {
		fn := m.t.nodes[from]
		m.update(from, fn.start, fn.end, x, q.slot, q.dist)
	}
	return late
}

// blocked reports whether an unpicked point below node b lies closer to x than q.dist and
// comes before q: the check of the sweeps. Node bests may be stale upper bounds.
func (m *tournament) blocked(b int32, x []float64, q tournamentBest) bool {
	node := &m.nodes[b]
	if node.slot < 0 || !m.best(b).before(q) || m.lowerBound(b, node, x) > pruneBound(q.dist) {
		return false
	}
	if node.right >= 0 {
		return m.blocked(b+1, x, q) || m.blocked(node.right, x, q)
	}
	t := m.t
	d := t.d
	fn := t.nodes[b]
	for s := fn.start; s < fn.end; s++ {
		v := m.dist[s]
		if v < q.dist || s == q.slot || (v == q.dist && t.index[s] > q.index) {
			// Picked (−Inf), q itself, or after q.
			continue
		}
		if math.Sqrt(squaredDistance(x, t.coords[int(s)*d:int(s+1)*d])) < q.dist {
			return true
		}
	}
	return false
}

// sweepStats, when not nil, is told by finish how many rounds the sweeps ran, how many points
// they picked, how many of those left their subtree (parallel sweeps only) and how many the
// tournament picked after them. For tests.
var sweepStats func(rounds, swept, border, rest int)

// finish picks the left unpicked points, after the tournament's picks: sweep rounds (on one
// goroutine per subtree in roots, or on one over the whole tree if roots has fewer than two),
// then the tournament for whatever the sweeps leave. It returns these picks as sequences, each
// in the serial order (mergePicks merges them).
func (m *tournament) finish(left int, roots []int32) [][]tournamentBest {
	if len(roots) < 2 {
		roots = []int32{0}
	}
	t := m.t
	d := t.d
	parts := make([][]tournamentBest, len(roots)) // the sweeps' picks, by subtree
	paths := make([][]int32, len(roots))
	borders := make([][]int32, len(roots))
	var late []tournamentBest // picks of points whose ball leaves their subtree, and the rest
	var w searchWork
	rounds, swept, borderPicks := 0, 0, 0
	for left > 0 {
		rounds++
		before := swept
		forEachChunk(len(roots), len(roots), func(k int) {
			parts[k], borders[k], paths[k] = m.sweep(roots[k], parts[k], borders[k][:0], paths[k])
		})
		swept = len(late)
		for _, part := range parts {
			swept += len(part)
		}
		// The points whose ball leaves their subtree, from the root on one goroutine.
		for _, border := range borders {
			for _, s := range border {
				v := m.dist[s]
				if math.IsInf(v, -1) {
					continue
				}
				q := tournamentBest{v, s, t.index[s]}
				x := t.coords[int(s)*d : int(s+1)*d]
				if from := t.radiusStart(x, v, &w); !m.blocked(from, x, q) {
					late = m.pickOutOfTurn(late, from, q, x)
					borderPicks++
					swept++
				}
			}
		}
		m.refreshAll(roots)
		picked := swept - before
		stop := picked*sweepMinShare < left
		left -= picked
		if stop {
			break
		}
	}
	// The tournament for the rest.
	rest := 0
	for top := m.pickBest(); top.slot >= 0; top = m.pickBest() {
		late = append(late, top)
		rest++
	}
	if sweepStats != nil {
		sweepStats(rounds, swept, borderPicks, rest)
	}
	seqs := append(parts, late)
	forEachChunk(len(seqs), len(roots), func(k int) { sortPicks(seqs[k]) })
	return seqs
}

// refreshAll recomputes every node's best, bottom-up: the subtrees of roots (disjoint; each is
// a range of node ids, pre-order) concurrently, then the nodes outside them.
func (m *tournament) refreshAll(roots []int32) {
	t := m.t
	refresh := func(lo, hi int32) {
		for b := hi - 1; b >= lo; b-- {
			m.refresh(b, t.nodes[b].start, t.nodes[b].end)
		}
	}
	if len(roots) < 2 {
		refresh(0, int32(len(m.nodes)))
		return
	}
	ends := make([]int32, len(roots))
	for k, r := range roots {
		ends[k] = m.subtreeEnd(r)
	}
	forEachChunk(len(roots), len(roots), func(k int) { refresh(roots[k], ends[k]) })
	// The ancestors: the nodes outside the subtrees, bottom-up (pre-order: a parent's id is
	// below its children's).
	for b := int32(len(m.nodes)) - 1; b >= 0; b-- {
		inside := false
		for k, r := range roots {
			if b >= r && b < ends[k] {
				inside = true
				break
			}
		}
		if !inside {
			m.refresh(b, t.nodes[b].start, t.nodes[b].end)
		}
	}
}

// subtreeEnd returns one past the last node id below b (pre-order: the subtree is
// [b, subtreeEnd(b))).
func (m *tournament) subtreeEnd(b int32) int32 {
	for m.nodes[b].right >= 0 {
		b = m.nodes[b].right
	}
	return b + 1
}

// mergePicks calls record for the picks of seqs, each in the serial order, merged into the
// serial order.
func mergePicks(seqs [][]tournamentBest, record func(int32, float64)) {
	next := make([]int, len(seqs))
	for {
		best, from := tournamentBest{slot: -1}, -1
		for k, seq := range seqs {
			if next[k] < len(seq) {
				if c := seq[next[k]]; c.before(best) {
					best, from = c, k
				}
			}
		}
		if from < 0 {
			return
		}
		next[from]++
		record(best.index, best.dist)
	}
}

// sortPicks sorts picks by (distance descending, index ascending), the serial tournament's
// order, for distances ≥ 0: a stable least-significant-digit radix sort by bytes, first of the
// index, then of the distance's bits (which order non-negative floats as the floats), that
// skips every byte all keys share.
func sortPicks(p []tournamentBest) {
	if len(p) < 2 {
		return
	}
	buf := make([]tournamentBest, len(p))
	src, dst := p, buf
	var count [256]int
	// place scatters src into dst by the bytes in key, unless they are all the same.
	place := func(key []uint8) {
		clear(count[:])
		for _, k := range key {
			count[k]++
		}
		if count[key[0]] == len(key) {
			return
		}
		at := 0
		for k, c := range count {
			count[k] = at
			at += c
		}
		for i, k := range key {
			dst[count[k]] = src[i]
			count[k]++
		}
		src, dst = dst, src
	}
	key := make([]uint8, len(p))
	for shift := 0; shift < 32; shift += 8 {
		for i, e := range src {
			key[i] = uint8(uint32(e.index) >> shift)
		}
		place(key)
	}
	for shift := 0; shift < 64; shift += 8 {
		for i, e := range src {
			key[i] = uint8(^math.Float64bits(e.dist) >> shift)
		}
		place(key)
	}
	if &src[0] != &p[0] {
		copy(p, src)
	}
}
