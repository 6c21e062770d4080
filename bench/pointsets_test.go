package bench

import (
	"fmt"
	"math"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// generator adapts every point-set generator to one signature for table-driven tests.
type generator struct {
	name string
	dims []int
	gen  func(n, d int, seed uint64) []float64
}

var generators = []generator{
	{"Uniform", []int{1, 2, 3, 5}, Uniform},
	{"Clustered", []int{1, 2, 3, 5}, Clustered},
	{"Sphere", []int{3}, func(n, _ int, seed uint64) []float64 { return Sphere(n, seed) }},
	{"Anisotropic", []int{1, 2, 3, 5}, Anisotropic},
}

func TestPointSetSizesAndRanges(t *testing.T) {
	for _, g := range generators {
		for _, d := range g.dims {
			for _, n := range []int{0, 1, 2, 3, 1000} {
				t.Run(fmt.Sprintf("%s/n=%d/d=%d", g.name, n, d), func(t *testing.T) {
					x := g.gen(n, d, 1)
					if len(x) != n*d {
						t.Fatalf("len = %d, want n·d = %d", len(x), n*d)
					}
					for i, v := range x {
						if math.IsNaN(v) || math.IsInf(v, 0) {
							t.Fatalf("coordinate %d is %v", i, v)
						}
						// All four sets lie in the closed unit cube by construction (the
						// sphere in [−1, 1]³).
						lo := 0.0
						if g.name == "Sphere" {
							lo = -1
						}
						if v < lo || v > 1 {
							t.Fatalf("coordinate %d = %v outside [%v, 1]", i, v, lo)
						}
						if g.name == "Uniform" && v == 1 {
							t.Fatalf("coordinate %d = 1, Uniform draws from [0, 1)", i)
						}
					}
				})
			}
		}
	}
}

func TestPointSetDeterminism(t *testing.T) {
	const n = 500
	for _, g := range generators {
		for _, d := range g.dims {
			t.Run(fmt.Sprintf("%s/n=%d/d=%d", g.name, n, d), func(t *testing.T) {
				a, b, c := g.gen(n, d, 7), g.gen(n, d, 7), g.gen(n, d, 8)
				if !sameBits(a, b) {
					t.Error("same seed gave different points")
				}
				if sameBits(a, c) {
					t.Error("seeds 7 and 8 gave the same points")
				}
			})
		}
	}
}

func sameBits(a, b []float64) bool {
	return slices.EqualFunc(a, b, func(x, y float64) bool { return math.Float64bits(x) == math.Float64bits(y) })
}

// TestPointSetPanics checks the programmer-error policy: negative sizes and d < 1 panic.
func TestPointSetPanics(t *testing.T) {
	cases := []struct {
		name string
		call func()
	}{
		{"Uniform/n=-1/d=2", func() { Uniform(-1, 2, 1) }},
		{"Uniform/n=1/d=0", func() { Uniform(1, 0, 1) }},
		{"Clustered/n=-1/d=2", func() { Clustered(-1, 2, 1) }},
		{"Sphere/n=-1", func() { Sphere(-1, 1) }},
		{"Anisotropic/n=1/d=0", func() { Anisotropic(1, 0, 1) }},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			defer func() {
				r := recover()
				if s, ok := r.(string); !ok || !strings.HasPrefix(s, "bench: ") {
					t.Errorf("recovered %v, want a panic with a \"bench: \" message", r)
				}
			}()
			c.call()
		})
	}
}

// meanNearestDistance returns the mean distance from each point to its nearest other point,
// by brute force over all pairs.
func meanNearestDistance(x []float64, d int) float64 {
	n := len(x) / d
	var sum float64
	for i := range n {
		best := math.Inf(1)
		for j := range n {
			if j == i {
				continue
			}
			var s float64
			for k := range d {
				t := x[i*d+k] - x[j*d+k]
				s += t * t
			}
			best = min(best, s)
		}
		sum += math.Sqrt(best)
	}
	return sum / float64(n)
}

func TestPointSetUniformMoments(t *testing.T) {
	n := 20000
	if testing.Short() {
		n = 5000
	}
	const d = 3
	x := Uniform(n, d, 1)
	for k := range d {
		var m, m2 float64
		for i := range n {
			m += x[i*d+k]
			m2 += x[i*d+k] * x[i*d+k]
		}
		m /= float64(n)
		v := m2/float64(n) - m*m
		// U(0, 1) has mean 1/2 and variance 1/12 (handbook fact); the tolerance is 5 standard
		// errors, √(1/12/n) for the mean and √(1/180/n) for the variance (Var of (U−½)² = 1/180).
		if tol := 5 * math.Sqrt(1.0/12/float64(n)); math.Abs(m-0.5) > tol {
			t.Errorf("coordinate %d: mean %v, want 0.5 ± %v", k, m, tol)
		}
		if tol := 5 * math.Sqrt(1.0/180/float64(n)); math.Abs(v-1.0/12) > tol {
			t.Errorf("coordinate %d: variance %v, want 1/12 ± %v", k, v, tol)
		}
	}
}

// TestPointSetClusteredIsClustered compares nearest-neighbour distances with the uniform case.
func TestPointSetClusteredIsClustered(t *testing.T) {
	const n, d = 2000, 2
	uniform := meanNearestDistance(Uniform(n, d, 1), d)
	// Clark & Evans (Ecology 35, 1954): for a Poisson process of density λ in the plane the
	// mean nearest-neighbour distance is 1/(2√λ) (from memory); edge effects in the unit square
	// add about 1 % at n = 2000, sampling noise about 1 %.
	const clarkEvansTolerance = 0.05
	if want := 0.5 / math.Sqrt(n); math.Abs(uniform/want-1) > clarkEvansTolerance {
		t.Errorf("uniform mean nearest distance %v, want %v within %v", uniform, want, clarkEvansTolerance)
	}
	// Clark & Evans's aggregation index R = (mean nearest distance)/(1/(2√λ)) is 1 for
	// complete spatial randomness and below 1 for clustered patterns (same paper). With 90 % of
	// the points in blobs of width 0.002–0.05 we require R < 0.75, a bound of our own choosing
	// (seeds 1–8 give 0.56–0.61 at n = 2000).
	const clusteredIndexBound = 0.75
	clustered := meanNearestDistance(Clustered(n, d, 1), d)
	if index := clustered / (0.5 / math.Sqrt(n)); index > clusteredIndexBound {
		t.Errorf("clustered aggregation index %v, want < %v", index, clusteredIndexBound)
	}
}

func TestPointSetClusteredNoDuplicates(t *testing.T) {
	for _, c := range []struct{ n, d int }{{3000, 1}, {3000, 2}, {1000, 3}} {
		t.Run(fmt.Sprintf("n=%d/d=%d", c.n, c.d), func(t *testing.T) {
			x := Clustered(c.n, c.d, 1)
			// Brute force over all pairs.
			for i := range c.n {
				for j := range i {
					if slices.Equal(x[i*c.d:(i+1)*c.d], x[j*c.d:(j+1)*c.d]) {
						t.Fatalf("points %d and %d coincide: %v", j, i, x[i*c.d:(i+1)*c.d])
					}
				}
			}
		})
	}
}

// TestPointSetDuplicatesAgainstBruteForce checks the helper Clustered uses to find duplicates, on
// inputs made with many repeats.
func TestPointSetDuplicatesAgainstBruteForce(t *testing.T) {
	for _, c := range []struct{ n, d int }{{0, 1}, {1, 1}, {2, 1}, {3, 2}, {200, 1}, {200, 2}} {
		t.Run(fmt.Sprintf("n=%d/d=%d", c.n, c.d), func(t *testing.T) {
			rng := newRand(1)
			x := make([]float64, c.n*c.d)
			for i := range x {
				x[i] = float64(rng.IntN(4)) // few distinct values: many duplicates
			}
			var want []int
			for i := range c.n {
				for j := range i {
					if slices.Equal(x[i*c.d:(i+1)*c.d], x[j*c.d:(j+1)*c.d]) {
						want = append(want, i)
						break
					}
				}
			}
			if got := duplicates(x, c.d); !slices.Equal(got, want) {
				t.Errorf("duplicates = %v, want %v", got, want)
			}
		})
	}
}

func TestPointSetReflectUnit(t *testing.T) {
	// Reflection at the faces 0 and 1 is t ↦ −t and t ↦ 2 − t; values worked by hand.
	cases := []struct{ in, want float64 }{
		{0, 0}, {0.25, 0.25}, {1, 1}, {-0.25, 0.25}, {1.25, 0.75}, {2.25, 0.25}, {-1.25, 0.75},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("t=%v", c.in), func(t *testing.T) {
			if got := reflectUnit(c.in); got != c.want {
				t.Errorf("reflectUnit(%v) = %v, want %v", c.in, got, c.want)
			}
		})
	}
}

func TestPointSetSphere(t *testing.T) {
	n := 20000
	if testing.Short() {
		n = 5000
	}
	x := Sphere(n, 1)
	// Each normalised point has norm 1 to a few ulps; 1e-15 is about 4.5 ulps of 1.
	const normTolerance = 1e-15
	upper := 0
	var mean [3]float64
	for i := range n {
		p := x[3*i : 3*i+3]
		r := math.Sqrt(p[0]*p[0] + p[1]*p[1] + p[2]*p[2])
		if math.Abs(r-1) > normTolerance {
			t.Fatalf("point %d has norm %v", i, r)
		}
		for k := range 3 {
			mean[k] += p[k] / float64(n)
		}
		if p[2] > 0.5 {
			upper++
		}
	}
	// Uniform on S²: each coordinate has mean 0 and variance 1/3 (symmetry); tolerance 5
	// standard errors.
	for k, m := range mean {
		if tol := 5 * math.Sqrt(1.0/3/float64(n)); math.Abs(m) > tol {
			t.Errorf("coordinate %d: mean %v, want 0 ± %v", k, m, tol)
		}
	}
	// Archimedes' hat-box theorem: the height z of a uniform point on the unit sphere is
	// uniform on [−1, 1], so P(z > ½) = ¼. Tolerance 5 binomial standard errors.
	frac := float64(upper) / float64(n)
	if tol := 5 * math.Sqrt(0.25*0.75/float64(n)); math.Abs(frac-0.25) > tol {
		t.Errorf("fraction with z > 1/2 is %v, want 0.25 ± %v", frac, tol)
	}
}

func TestPointSetAnisotropicShape(t *testing.T) {
	const n = 5000
	for _, d := range []int{1, 2, 3, 5} {
		t.Run(fmt.Sprintf("n=%d/d=%d", n, d), func(t *testing.T) {
			x := Anisotropic(n, d, 1)
			u := make([]float64, d)
			for k := range u {
				u[k] = 1 / math.Sqrt(float64(d))
			}
			// Rounding of the Householder reflection: a few ulps of coordinates of order 1.
			const boxTolerance = 1e-12
			for i := range n {
				p := x[i*d : (i+1)*d]
				var along float64
				for k := range d {
					along += (p[k] - 0.5) * u[k]
				}
				var across2 float64
				for k := range d {
					t := p[k] - 0.5 - along*u[k]
					across2 += t * t
				}
				// The box [−½, ½] × [−r/2, r/2]ᵈ⁻¹: along u within ½, across within r√(d−1)/2.
				if math.Abs(along) > 0.5+boxTolerance {
					t.Fatalf("point %d: %v along the long axis", i, along)
				}
				if math.Sqrt(across2) > AnisotropicRatio*math.Sqrt(float64(d-1))/2+boxTolerance {
					t.Fatalf("point %d: %v across the long axis", i, math.Sqrt(across2))
				}
			}
			if d == 1 {
				return
			}
			// The covariance of a uniform box has eigenvalues side²/12, so the square root of the
			// smallest over the largest eigenvalue is the axis ratio (eigenvalues by gonum).
			cov := mat.NewSymDense(d, nil)
			mean := make([]float64, d)
			for i := range n {
				for k := range d {
					mean[k] += x[i*d+k] / n
				}
			}
			for i := range n {
				for a := range d {
					for b := a; b < d; b++ {
						cov.SetSym(a, b, cov.At(a, b)+(x[i*d+a]-mean[a])*(x[i*d+b]-mean[b])/n)
					}
				}
			}
			var eig mat.EigenSym
			if !eig.Factorize(cov, false) {
				t.Fatal("eigen decomposition failed")
			}
			vals := eig.Values(nil)
			sort.Float64s(vals)
			ratio := math.Sqrt(vals[0] / vals[d-1])
			// Sampling noise in the eigenvalues at n = 5000 is a few percent; 20 % is loose.
			const ratioTolerance = 0.2
			if math.Abs(ratio/AnisotropicRatio-1) > ratioTolerance {
				t.Errorf("axis ratio %v, want %v within %v", ratio, AnisotropicRatio, ratioTolerance)
			}
			if want := 1.0 / 12; math.Abs(vals[d-1]/want-1) > ratioTolerance {
				t.Errorf("long-axis variance %v, want 1/12 within %v", vals[d-1], ratioTolerance)
			}
		})
	}
}

// zipRows is the number of data rows in testdata/zcta_centroids.csv, counted by the converter
// and by an independent awk extraction of the source file (testdata/README.md).
const zipRows = 33791

func loadZIP(t *testing.T) *ZIPAreas {
	t.Helper()
	a, err := LoadZIPAreas()
	if err != nil {
		t.Fatal(err)
	}
	return a
}

func degrees(rad float64) float64 { return rad * 180 / math.Pi }

func TestZIPAreasFile(t *testing.T) {
	a := loadZIP(t)
	if a.Len() != zipRows || len(a.Lat) != zipRows || len(a.Lon) != zipRows {
		t.Fatalf("%d codes, %d latitudes, %d longitudes, want %d each", a.Len(), len(a.Lat), len(a.Lon), zipRows)
	}
	// Rows copied from the CSV (its first and last data lines), compared exactly.
	rows := []struct {
		index    int
		code     string
		lat, lon float64
	}{
		{0, "00601", 0.3173105, -1.1650066},
		{zipRows - 1, "99929", 0.9812503, -2.3025010},
	}
	for _, r := range rows {
		t.Run("row="+r.code, func(t *testing.T) {
			if a.Codes[r.index] != r.code || a.Lat[r.index] != r.lat || a.Lon[r.index] != r.lon {
				t.Errorf("row %d = %s %v %v, want %s %v %v", r.index, a.Codes[r.index], a.Lat[r.index], a.Lon[r.index], r.code, r.lat, r.lon)
			}
		})
	}
	// Known places, in degrees, from memory (to about 0.1°): the file's units are radians.
	const placeTolerance = 0.1
	places := []struct {
		code, place string
		lat, lon    float64
	}{
		{"00601", "Adjuntas, Puerto Rico", 18.18, -66.75},
		{"10001", "Manhattan, New York", 40.75, -74.00},
		{"60601", "Chicago Loop", 41.88, -87.62},
		{"90210", "Beverly Hills, California", 34.10, -118.41},
		{"96813", "Honolulu, Hawaii", 21.31, -157.85},
	}
	for _, p := range places {
		t.Run("place="+p.code, func(t *testing.T) {
			i := slices.Index(a.Codes, p.code)
			if i < 0 {
				t.Fatalf("%s (%s) missing", p.code, p.place)
			}
			lat, lon := degrees(a.Lat[i]), degrees(a.Lon[i])
			if math.Abs(lat-p.lat) > placeTolerance || math.Abs(lon-p.lon) > placeTolerance {
				t.Errorf("%s (%s) at %.4f° %.4f°, want %.2f° %.2f°", p.code, p.place, lat, lon, p.lat, p.lon)
			}
		})
	}
}

// haversineKm is the great-circle distance on a sphere of radius EarthRadiusKm by the
// haversine formula (R. W. Sinnott, Virtues of the haversine, Sky and Telescope 68(2), 1984).
func haversineKm(lat1, lon1, lat2, lon2 float64) float64 {
	s1, s2 := math.Sin((lat2-lat1)/2), math.Sin((lon2-lon1)/2)
	h := s1*s1 + math.Cos(lat1)*math.Cos(lat2)*s2*s2
	return 2 * EarthRadiusKm * math.Asin(math.Sqrt(h))
}

func TestZIPCentroidsProjection(t *testing.T) {
	a := loadZIP(t)
	points, err := ZIPCentroids()
	if err != nil {
		t.Fatal(err)
	}
	if len(points) != 2*zipRows {
		t.Fatalf("%d coordinates, want 2·%d", len(points), zipRows)
	}
	proj, lat0, _ := a.Project()
	if !sameBits(points, proj) {
		t.Fatal("ZIPCentroids differs from Project on the loaded areas")
	}
	// Short distances near the centre latitude: the equirectangular projection is within the
	// factor cos φ₀ / cos φ of the great-circle distance, under 2 % for |φ − φ₀| < 1° at
	// φ₀ ≈ 39° (tan 39° · 1° ≈ 1.4 %).
	const shortDistanceTolerance = 0.02
	checked := 0
	for i := 1; i < a.Len(); i++ {
		if math.Abs(a.Lat[i]-lat0) > math.Pi/180 || math.Abs(a.Lat[i-1]-lat0) > math.Pi/180 {
			continue
		}
		great := haversineKm(a.Lat[i-1], a.Lon[i-1], a.Lat[i], a.Lon[i])
		if great > 50 || great < 1 {
			continue
		}
		flat := math.Hypot(points[2*i]-points[2*i-2], points[2*i+1]-points[2*i-1])
		if math.Abs(flat/great-1) > shortDistanceTolerance {
			t.Errorf("%s–%s: projected %v km, great circle %v km", a.Codes[i-1], a.Codes[i], flat, great)
		}
		checked++
	}
	if checked < 100 {
		t.Errorf("only %d neighbouring pairs checked", checked)
	}
	// Extent of the contiguous United States (areas in the box 24°–50° N, 125°–66° W). From
	// memory: about 4500 km east to west (Cape Alava to West Quoddy Head) and 2700 km north to
	// south (Key West, 24.5° N, to the 49th parallel). The projection measures east–west along
	// the parallel φ₀ ≈ 39°, which overstates the width by some 10 %; the y extent is exact.
	minX, maxX, minY, maxY := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i := range a.Len() {
		lat, lon := degrees(a.Lat[i]), degrees(a.Lon[i])
		if lat < 24 || lat > 50 || lon < -125 || lon > -66 {
			continue
		}
		minX, maxX = min(minX, points[2*i]), max(maxX, points[2*i])
		minY, maxY = min(minY, points[2*i+1]), max(maxY, points[2*i+1])
	}
	if w := maxX - minX; w < 4000 || w > 5500 {
		t.Errorf("contiguous US width %v km, want about 4500 (4000–5500 allowed)", w)
	}
	if h := maxY - minY; h < 2500 || h > 2900 {
		t.Errorf("contiguous US height %v km, want about 2700 (2500–2900 allowed)", h)
	}
	// The Western Pacific (Guam 96910, east longitude) is shifted to lie west of Honolulu,
	// roughly 6100 km away along the great circle (from memory), not on the far side of the map.
	guam, honolulu := slices.Index(a.Codes, "96910"), slices.Index(a.Codes, "96813")
	if dx := points[2*honolulu] - points[2*guam]; dx < 4000 || dx > 7000 {
		t.Errorf("Guam is %v km west of Honolulu in the projection, want 4000–7000", dx)
	}
}

func TestZIPSubset(t *testing.T) {
	all, err := ZIPCentroids()
	if err != nil {
		t.Fatal(err)
	}
	member := make(map[[2]float64]bool, len(all)/2)
	for i := 0; i < len(all); i += 2 {
		member[[2]float64{all[i], all[i+1]}] = true
	}
	for _, n := range []int{0, 1, 3, 3000, zipRows} {
		t.Run(fmt.Sprintf("n=%d/seed=1", n), func(t *testing.T) {
			x, err := ZIPSubset(n, 1)
			if err != nil {
				t.Fatal(err)
			}
			if len(x) != 2*n {
				t.Fatalf("len = %d, want %d", len(x), 2*n)
			}
			seen := make(map[[2]float64]bool, n)
			for i := range n {
				p := [2]float64{x[2*i], x[2*i+1]}
				if !member[p] {
					t.Fatalf("point %d %v is not a ZIP centroid", i, p)
				}
				if seen[p] {
					t.Fatalf("point %d %v drawn twice", i, p)
				}
				seen[p] = true
			}
			again, _ := ZIPSubset(n, 1)
			if !sameBits(x, again) {
				t.Error("same seed gave a different subset")
			}
			if n >= 3 {
				other, _ := ZIPSubset(n, 2)
				if sameBits(x, other) {
					t.Error("seeds 1 and 2 gave the same subset")
				}
			}
		})
	}
	t.Run(fmt.Sprintf("n=%d/too-many", zipRows+1), func(t *testing.T) {
		if _, err := ZIPSubset(zipRows+1, 1); err == nil {
			t.Error("no error for a subset larger than the set")
		}
	})
}

func TestReadZIPAreasErrors(t *testing.T) {
	cases := []struct{ name, input, want string }{
		{"empty", "", "empty file"},
		{"header-only", zipHeader + "\n", "no areas"},
		{"bad-header", "zip,lat,lon\n00601,0.3,-1.1\n", "x:1:1: header"},
		{"fields", zipHeader + "\n00601,0.3\n", "x:2: 2 fields"},
		{"code", zipHeader + "\n0601,0.3,-1.1\n", "x:2:1: code"},
		{"repeat", zipHeader + "\n00601,0.3,-1.1\n00601,0.3,-1.2\n", "x:3:1: code 00601 repeats line 2"},
		{"lat-syntax", zipHeader + "\n00601,abc,-1.1\n", "x:2:2:"},
		{"lat-range", zipHeader + "\n00601,1.6,-1.1\n", "x:2:2: 1.6 radians"},
		{"lon-nan", zipHeader + "\n00601,0.3,NaN\n", "x:2:3:"},
		{"lon-range", zipHeader + "\n00601,0.3,-3.2\n", "x:2:3:"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := parseZIPAreas(strings.NewReader(c.input), "x")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("error %v, want one containing %q", err, c.want)
			}
		})
	}
	t.Run("valid-crlf", func(t *testing.T) {
		a, err := parseZIPAreas(strings.NewReader(zipHeader+"\r\n00601,0.3173105,-1.1650066\r\n"), "x")
		if err != nil || a.Len() != 1 || a.Lat[0] != 0.3173105 || a.Lon[0] != -1.1650066 {
			t.Errorf("got %+v, %v", a, err)
		}
	})
}

func FuzzReadZIPAreas(f *testing.F) {
	f.Add(zipHeader + "\n00601,0.3173105,-1.1650066\n00602,0.3204764,-1.1724353\n")
	f.Add(zipHeader + "\n")
	f.Add(zipHeader + "\n00601,1e308,0\n")
	f.Add("zcta,lat_rad,lon_rad\r\n99929,0.9812503,-2.3025010")
	f.Fuzz(func(t *testing.T, input string) {
		a, err := parseZIPAreas(strings.NewReader(input), "fuzz")
		if err != nil {
			if !strings.HasPrefix(err.Error(), "fuzz") {
				t.Errorf("error %q does not name the file", err)
			}
			return
		}
		if a.Len() == 0 || len(a.Lat) != a.Len() || len(a.Lon) != a.Len() {
			t.Fatalf("inconsistent table: %d codes, %d, %d", a.Len(), len(a.Lat), len(a.Lon))
		}
		seen := map[string]bool{}
		for i, code := range a.Codes {
			if _, err := strconv.Atoi(code); err != nil || len(code) != 5 || seen[code] {
				t.Errorf("row %d: bad or repeated code %q", i, code)
			}
			seen[code] = true
			if !(math.Abs(a.Lat[i]) <= math.Pi/2) || !(math.Abs(a.Lon[i]) <= math.Pi) {
				t.Errorf("row %d: %v %v out of range", i, a.Lat[i], a.Lon[i])
			}
		}
	})
}

func ExampleZIPAreas() {
	a, err := LoadZIPAreas()
	if err != nil {
		fmt.Println(err)
		return
	}
	points, lat0, _ := a.Project()
	fmt.Printf("%d areas; %s at %.3f° N %.3f° E\n", a.Len(), a.Codes[0], degrees(a.Lat[0]), degrees(a.Lon[0]))
	fmt.Printf("projected about %.2f° N: (%.1f km, %.1f km)\n", degrees(lat0), points[0], points[1])
	// The projected point was checked against an awk computation of the same formula from the
	// CSV (x = R cos φ₀ (λ − λ₀), y = R (φ − φ₀), east longitudes shifted by −2π).
	//
	// Output:
	// 33791 areas; 00601 at 18.181° N -66.750° E
	// projected about 38.80° N: (2106.9 km, -2292.8 km)
}

func ExampleClustered() {
	x := Clustered(1000, 2, 1)
	fmt.Println(len(x), len(duplicates(x, 2)))
	// Output: 2000 0
}
