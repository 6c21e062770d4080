package cholesky

import (
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// zipSubsetPoints returns n of the ZIP-area centroids of testdata/zcta_centroids.csv drawn
// without replacement (partial Fisher–Yates with rand.NewPCG(seed, seed)), projected as the
// bench harness does it (bench.ZIPAreas.Project: equirectangular about the mean latitude and
// longitude, longitudes east of Greenwich shifted by −2π, Earth radius 6371.0088 km) and
// divided by 4000 km, as bench.PointSet("zip") does. Exact duplicates are dropped. Written out
// here because bench imports this package.
func zipSubsetPoints(t testing.TB, n int, seed uint64) []float64 {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "testdata", "zcta_centroids.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	records, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	records = records[1:] // header zcta,lat_rad,lon_rad
	lat := make([]float64, len(records))
	lon := make([]float64, len(records))
	var lat0, lon0 float64
	for i, r := range records {
		if lat[i], err = strconv.ParseFloat(r[1], 64); err != nil {
			t.Fatal(err)
		}
		if lon[i], err = strconv.ParseFloat(r[2], 64); err != nil {
			t.Fatal(err)
		}
		if lon[i] > 0 {
			lon[i] -= 2 * math.Pi
		}
		lat0 += lat[i]
		lon0 += lon[i]
	}
	lat0 /= float64(len(lat))
	lon0 /= float64(len(lon))
	const radiusKm, unitKm = 6371.0088, 4000
	rng := rand.New(rand.NewPCG(seed, seed))
	idx := make([]int, len(records))
	for i := range idx {
		idx[i] = i
	}
	seen := make(map[[2]float64]bool)
	var out []float64
	for k := 0; k < len(idx) && len(out) < 2*n; k++ {
		j := k + rng.IntN(len(idx)-k)
		idx[k], idx[j] = idx[j], idx[k]
		i := idx[k]
		p := [2]float64{radiusKm * math.Cos(lat0) * (lon[i] - lon0) / unitKm, radiusKm * (lat[i] - lat0) / unitKm}
		if !seen[p] {
			seen[p] = true
			out = append(out, p[0], p[1])
		}
	}
	return out
}

// orderedPoints returns the reverse maximin ordering of points and the points in its
// positions.
func orderedPoints(points []float64, d int) (ordering.Ordering, []float64) {
	ord := ordering.ReverseMaximin(points, d, nil)
	permuted := make([]float64, len(points))
	for p, i := range ord.Order {
		copy(permuted[p*d:(p+1)*d], points[i*d:(i+1)*d])
	}
	return ord, permuted
}

func TestGreedyKLAgainstNearestNeighbors(t *testing.T) {
	// KL(N(0,Θ) ‖ N(0,(LLᵀ)⁻¹)) of the KL-optimal factor on the greedy pattern against the
	// nearest-neighbour pattern at the same m, both computed per column (λ = 1) and measured
	// with the dense Θ (DESIGN.md §4). With one column per pattern column,
	//
	//	2·KL = Σⱼ log Var(yⱼ | y_{sⱼ∖j}) − log det Θ = Σⱼ log (Var(yⱼ | y_{sⱼ∖j}) / Var(yⱼ | y_{i>j}))
	//
	// (DESIGN.md §4; the second form by the chain rule log det Θ = Σⱼ log Var(yⱼ | y_{i>j})),
	// so KL is a sum of per-column terms, each ≥ 0.
	//
	// What is asserted, and why:
	//   - m = 1: KL(greedy) ≤ KL(nearest). Theorem-level: the nearest point is one of the
	//     candidates and the greedy first pick minimises Var(yⱼ | {i}) over all candidates, so
	//     every column's term is ≤ (up to rounding, tolerance below).
	//   - m ≥ 2: KL(greedy) ≤ KL(nearest), as issue 5 requires. This is NOT a theorem: a greedy
	//     set need not beat the nearest set in a given column (later picks can be worse than a
	//     jointly chosen set). It is asserted because the prototype measured 1.5–12× gains on
	//     these kinds of data and a reversal would mean a defect or a real limitation to
	//     report; the per-column reversals are counted and logged.
	//   - No column needs a diagonal jitter on either pattern.
	// The KL ratios are logged as a table (measurements, not assertions). KCHOL_LARGE=1 runs
	// N = 8000 (the size; minutes on 2 cores), else N = 1500 (600 with -short).
	n := 1500
	if testing.Short() {
		n = 600
	}
	if os.Getenv("KCHOL_LARGE") == "1" {
		n = 8000
	}
	sets := []struct {
		name   string
		d      int
		points []float64
	}{
		{"uniform2d", 2, uniformPoints(n, 2, 31)},
		{"clustered2d", 2, clusteredPoints(n, 2, 32)},
		{"sphere3d", 3, spherePoints(n, 33)},
		{"zip", 2, zipSubsetPoints(t, n, 1)},
	}
	ms := []int{1, 5, 10, 20, 30}
	var table strings.Builder
	fmt.Fprintf(&table, "\n| points | N | kernel | ℓ | m | c | KL nearest | KL greedy | ratio | columns where greedy is worse |\n|---|---|---|---|---|---|---|---|---|---|\n")
	for _, set := range sets {
		ord, permuted := orderedPoints(set.points, set.d)
		np := len(set.points) / set.d
		for _, family := range []kernels.Family{kernels.Matern12, kernels.Matern32} {
			const lengthScale = 0.1
			name := fmt.Sprintf("%s/n=%d/%v/l=%g", set.name, np, family, lengthScale)
			t.Run(name, func(t *testing.T) {
				k := kernels.Stationary{Family: family, Dimension: set.d, LengthScale: lengthScale}
				theta := denseKernelMatrix(k, set.points, set.d)
				logDet := denseCholesky(t, theta).LogDet()
				// Rounding in the dense KL formula (as in TestKLNonIncreasingInRhoAndNeighbors).
				tolerance := 1e-9 * (math.Abs(logDet) + float64(np))
				for _, m := range ms {
					nearest := ordering.NearestNeighbors(permuted, set.d, m)
					greedy := ordering.Greedy(permuted, set.d, k, m, 0)
					kls := [2]float64{}
					var factors [2]*Factor
					for p, pat := range []*ordering.Pattern{nearest, greedy} {
						f, err := NewFromPattern(context.Background(), set.points, set.d, k, ord, pat, &Settings{Lambda: 1})
						if err != nil {
							t.Fatal(err)
						}
						if f.jittered != 0 {
							t.Errorf("m=%d pattern %d: %d columns jittered", m, p, f.jittered)
						}
						kls[p], _ = klDivergence(f, theta, logDet)
						factors[p] = f
					}
					// Per-column terms: log Var(yⱼ | sⱼ) = −2 log Lⱼⱼ for the KL-optimal column
					// (DESIGN.md §4), so a column is worse under greedy when its Lⱼⱼ is smaller.
					worse := 0
					for j := range np {
						_, vn := factors[0].col(j)
						_, vg := factors[1].col(j)
						if vg[0] < vn[0]*(1-1e-12) {
							worse++
						}
					}
					if m == 1 && worse > 0 {
						t.Errorf("m=1: %d columns where the greedy pick leaves a larger Var(yⱼ | ·) than the nearest point", worse)
					}
					if kls[1] > kls[0]+tolerance {
						t.Errorf("m=%d: KL greedy %.6g > KL nearest %.6g", m, kls[1], kls[0])
					}
					fmt.Fprintf(&table, "| %s | %d | %v | %g | %d | %d | %.4g | %.4g | %.2f | %d |\n",
						set.name, np, family, lengthScale, m, ordering.DefaultCandidatesPerNeighbor*m, kls[0], kls[1], kls[0]/kls[1], worse)
				}
			})
		}
	}
	t.Log(table.String())
}

// BenchmarkGreedyFactor times the whole pipeline (ordering, pattern, factor) with the greedy
// pattern (c = 4m) against the nearest-neighbour pattern at the same m: 2D uniform points,
// Matérn 3/2, ℓ = 0.05, supernodes with the default λ and without (λ = 1).
func BenchmarkGreedyFactor(b *testing.B) {
	for _, n := range []int{1e4, 1e5} {
		points := uniformPoints(n, 2, 1)
		k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.05}
		for _, m := range []int{20, 30} {
			for _, lambda := range []float64{ordering.DefaultLambda, 1} {
				for _, greedy := range []bool{false, true} {
					pattern := "neighbors"
					if greedy {
						pattern = "greedy"
					}
					run := func() *Factor {
						ord, permuted := orderedPoints(points, 2)
						var pat *ordering.Pattern
						if greedy {
							pat = ordering.Greedy(permuted, 2, k, m, 0)
						} else {
							pat = ordering.NearestNeighbors(permuted, 2, m)
						}
						f, err := NewFromPattern(context.Background(), points, 2, k, ord, pat, &Settings{Lambda: lambda})
						if err != nil {
							b.Fatal(err)
						}
						return f
					}
					b.Run(fmt.Sprintf("n=%.0e/m=%d/lambda=%g/pattern=%s", float64(n), m, lambda, pattern), func(b *testing.B) {
						// Correctness before timing: every diagonal entry positive and finite.
						f := run()
						for j := range n {
							if _, v := f.col(j); !(v[0] > 0 && !math.IsInf(v[0], 1)) {
								b.Fatalf("column %d: L_jj = %v", j, v[0])
							}
						}
						nnz := float64(f.NNZ()) / float64(n)
						b.ResetTimer()
						for b.Loop() {
							run()
						}
						b.ReportMetric(nnz, "nnz/col")
					})
				}
			}
		}
	}
}
