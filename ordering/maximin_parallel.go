package ordering

import (
	"math"
	"runtime"
	"sync"
	"sync/atomic"
)

// parallelMaximinFrom is the number of points from which ReverseMaximin splits the tournament
// between workers. Measured on uniform points in the unit square, best of 7, 1 against 2
// workers: 2000 points 2.96 and 2.57 ms, 4000 points 6.3 and 4.5 ms, 64,000 points 153 and
// 111 ms. A variable so that tests can run the parallel path on small point sets.
var parallelMaximinFrom = 1 << 12

// runMaximinRegions runs the regions' workers until every region is picked out. A variable so
// that tests can run the same steps under schedules of their own.
var runMaximinRegions = func(m *tournament, regions []*maximinRegion) {
	var wg sync.WaitGroup
	for k := range regions {
		wg.Go(func() {
			for {
				left, picked := m.step(regions, k)
				if !left {
					return
				}
				if !picked {
					runtime.Gosched()
				}
			}
		})
	}
	wg.Wait()
}

// maximinRegion is one worker's part of a parallel maximin tournament: a subtree of the flat
// kd-tree, whose points only that worker picks and updates.
type maximinRegion struct {
	root       int32     // the subtree's root node
	start, end int32     // its slots
	low, high  []float64 // its box

	// The region's current best point, published under a sequence lock (seq odd while it is
	// being written) so that another worker reads dist, slot and index together.
	seq   atomic.Uint64
	dist  atomic.Uint64 // math.Float64bits
	slot  atomic.Int32
	index atomic.Int32

	// sent[:sentLen] are this region's picks whose ball reaches another region, in pick
	// order; each is written before sentLen counts it.
	sent    []tournamentBest
	sentLen atomic.Int64

	picks []tournamentBest // the region's picks, in pick order
	quota int              // after this many picks the region sets the tournament's stopAt

	// The worker's own state: applied[o] is the number of region o's sent picks applied here,
	// published the best last published.
	applied   []int64
	published tournamentBest
}

func (r *maximinRegion) publish(b tournamentBest) {
	r.seq.Add(1)
	r.dist.Store(math.Float64bits(b.dist))
	r.slot.Store(b.slot)
	r.index.Store(b.index)
	r.seq.Add(1)
}

func (r *maximinRegion) read() tournamentBest {
	for {
		if s := r.seq.Load(); s&1 == 0 {
			b := tournamentBest{math.Float64frombits(r.dist.Load()), r.slot.Load(), r.index.Load()}
			if r.seq.Load() == s {
				return b
			}
		}
		runtime.Gosched()
	}
}

// maximinRegions returns the subtrees to give one worker each: the nodes at the deepest level
// k with 2ᵏ ≤ workers, or nil if the tree is too shallow for two.
func maximinRegions(t *flatTree, workers int) []int32 {
	frontier := []int32{0}
	for 2*len(frontier) <= workers {
		next := make([]int32, 0, 2*len(frontier))
		for _, b := range frontier {
			node := t.nodes[b]
			if node.left < 0 {
				return nil
			}
			next = append(next, node.left, node.right)
		}
		frontier = next
	}
	if len(frontier) < 2 {
		return nil
	}
	return frontier
}

// parallel picks the points on len(roots) workers, one subtree each, and records them in the
// serial order.
//
// The serial tournament picks in the order of (distance descending, index ascending), and a
// pick's distance depends only on the picks before it that lie within that distance. So a
// worker may pick its own best point q (distance ℓ) as soon as no point of another region
// can still change ℓ or be changed by q: for every other region, either none of its points
// lies within ℓ of q (its box is farther), or its published best comes after q — then every
// pick of that region that comes before q is already made, and the worker has applied those
// that reach it. A pick whose ball reaches another region's box is sent there, before its
// region publishes a best that comes after it. A region that was not waited for may still
// hold points that come before a pick it receives, so a received pick at distance ℓ lowers
// only distances to it below ℓ; the points it would lower in the serial tournament are
// exactly those (every point picked after it has distance at most ℓ). The worker holding the
// overall best point can always pick, so the workers never all wait. Each region picks in
// serial order, so merging the regions' picks by the same order gives the serial sequence,
// with the same distances.
//
// Once a region has picked 1/sweepAfter of its points, it sets stopAt to its best distance,
// and every region stops when its best is at or below stopAt. The stopped regions' bests come
// after every pick still made above stopAt, so nobody waits for them. Then every region
// applies the picks sent to it since it stopped, the sweeps pick the rest (tournament.finish,
// one goroutine per region), and all pick sequences are merged.
func (m *tournament) parallel(roots []int32, record func(int32, float64)) {
	t := m.t
	d := t.d
	regions := make([]*maximinRegion, len(roots))
	for k, b := range roots {
		node := t.nodes[b]
		box := t.boxes[2*d*int(b) : 2*d*int(b+1)]
		regions[k] = &maximinRegion{
			root: b, start: node.start, end: node.end, low: box[:d], high: box[d:],
			sent:      make([]tournamentBest, node.end-node.start),
			picks:     make([]tournamentBest, 0, node.end-node.start),
			applied:   make([]int64, len(roots)),
			published: m.best(b),
			quota:     int(node.end-node.start) / sweepAfter,
		}
		regions[k].publish(regions[k].published)
	}
	m.stopAt.Store(math.Float64bits(math.Inf(-1)))
	runMaximinRegions(m, regions)

	// Apply the picks a region sent after its receiver stopped, then sweep.
	forEachChunk(len(regions), len(regions), func(k int) { m.applySent(regions, k) })
	late := m.finish(m.unpicked(), roots)

	// Merge the regions' pick sequences and the sweeps'.
	sequences := make([][]tournamentBest, 0, len(regions)+len(late))
	for _, r := range regions {
		sequences = append(sequences, r.picks)
	}
	mergePicks(append(sequences, late...), record)
}

// applySent lowers region k's distances for the picks the other regions have sent it since
// the last call.
func (m *tournament) applySent(regions []*maximinRegion, k int) {
	t := m.t
	d := t.d
	r := regions[k]
	for o, other := range regions {
		if o == k {
			continue
		}
		for n := other.sentLen.Load(); r.applied[o] < n; r.applied[o]++ {
			p := other.sent[r.applied[o]]
			m.update(r.root, r.start, r.end, t.coords[int(p.slot)*d:int(p.slot+1)*d], -1, p.dist)
		}
	}
}

// step is one turn of region k's worker: it applies the picks the other regions have sent,
// publishes its best point, and picks it if no other region can still change it. It reports
// whether the region had a point left, and whether it picked one.
func (m *tournament) step(regions []*maximinRegion, k int) (left, picked bool) {
	t := m.t
	d := t.d
	r := regions[k]
	m.applySent(regions, k)
	q := m.best(r.root)
	if q != r.published {
		r.publish(q)
		r.published = q
	}
	if q.slot >= 0 && len(r.picks) >= r.quota {
		m.stopAt.CompareAndSwap(math.Float64bits(math.Inf(-1)), math.Float64bits(q.dist))
	}
	if q.slot < 0 || q.dist <= math.Float64frombits(m.stopAt.Load()) {
		// Nothing left, or the rest is the sweeps'. A region that stops publishes a best at
		// or below stopAt, so no region picking above it waits for this one.
		return false, false
	}
	x := t.coords[int(q.slot)*d : int(q.slot+1)*d]
	reaches := false
	for o, other := range regions {
		if o == k || boxLowerBound(other.low, other.high, x) > pruneBound(q.dist) {
			continue
		}
		reaches = true
		// Read the best before the count: a region sends a pick before it publishes a best
		// after it, so a best after q with nothing new sent means nothing is missing.
		if ob := other.read(); !q.before(ob) || other.sentLen.Load() != r.applied[o] {
			return true, false
		}
	}
	r.picks = append(r.picks, q)
	m.dist[q.slot] = math.Inf(-1)
	m.update(r.root, r.start, r.end, x, q.slot, q.dist)
	if reaches {
		n := r.sentLen.Load()
		r.sent[n] = q
		r.sentLen.Store(n + 1)
	}
	return true, true
}
