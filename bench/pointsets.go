package bench

import (
	"bufio"
	"cmp"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
)

// newRand returns the generator every point set of the package draws from.
func newRand(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, seed)) }

func checkSize(n, d int) {
	if n < 0 {
		panic(fmt.Sprintf("bench: negative number of points %d", n))
	}
	if d < 1 {
		panic(fmt.Sprintf("bench: dimension %d, want ≥ 1", d))
	}
}

// Uniform returns n points drawn independently and uniformly from the unit cube [0, 1)ᵈ.
// It panics if n < 0 or d < 1. Cost O(n d).
func Uniform(n, d int, seed uint64) []float64 {
	checkSize(n, d)
	rng := newRand(seed)
	x := make([]float64, n*d)
	for i := range x {
		x[i] = rng.Float64()
	}
	return x
}

// Clustered-set parameters.
const (
	// ClusterCount is the number of Gaussian blobs of Clustered.
	ClusterCount = 40
	// ClusterWidthMin and ClusterWidthMax bound the blobs' standard deviations, drawn
	// log-uniformly between them.
	ClusterWidthMin, ClusterWidthMax = 0.002, 0.05
	// ClusterBackground is the fraction of Clustered's points drawn uniformly from the cube.
	ClusterBackground = 0.1
)

// Clustered returns n points in the unit cube [0, 1]ᵈ: round(ClusterBackground·n) drawn
// uniformly, the others from ClusterCount isotropic Gaussian blobs (each point picks a blob with
// equal probability) whose centres are uniform in [0.1, 0.9]ᵈ and whose standard deviations are
// log-uniform in [ClusterWidthMin, ClusterWidthMax]. Coordinates that fall outside [0, 1] are
// reflected back at the faces. No two points coincide exactly: a point equal to an earlier one
// is drawn again. It panics if n < 0 or d < 1. Cost O(n d log n).
func Clustered(n, d int, seed uint64) []float64 {
	checkSize(n, d)
	rng := newRand(seed)
	centres := make([]float64, ClusterCount*d)
	widths := make([]float64, ClusterCount)
	for c := range ClusterCount {
		for k := range d {
			centres[c*d+k] = 0.1 + 0.8*rng.Float64()
		}
		widths[c] = ClusterWidthMin * math.Pow(ClusterWidthMax/ClusterWidthMin, rng.Float64())
	}
	background := int(math.Round(ClusterBackground * float64(n)))
	draw := func(dst []float64, i int) {
		if i < background {
			for k := range dst {
				dst[k] = rng.Float64()
			}
			return
		}
		c := rng.IntN(ClusterCount)
		for k := range dst {
			dst[k] = reflectUnit(centres[c*d+k] + widths[c]*rng.NormFloat64())
		}
	}
	x := make([]float64, n*d)
	for i := range n {
		draw(x[i*d:(i+1)*d], i)
	}
	// Redraw exact duplicates (the later point of each equal pair) until there are none.
	for {
		dups := duplicates(x, d)
		if len(dups) == 0 {
			return x
		}
		for _, i := range dups {
			draw(x[i*d:(i+1)*d], i)
		}
	}
}

// reflectUnit folds t into [0, 1] by reflection at 0 and 1 (period 2).
func reflectUnit(t float64) float64 {
	t = math.Mod(math.Abs(t), 2)
	if t > 1 {
		t = 2 - t
	}
	return t
}

// duplicates returns, in increasing order, the indices of the points of x (dimension d) that
// equal a point of lower index. Cost O(n d log n).
func duplicates(x []float64, d int) []int {
	n := len(x) / d
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	lexical := func(a, b int) int {
		if c := slices.Compare(x[a*d:(a+1)*d], x[b*d:(b+1)*d]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	}
	slices.SortFunc(idx, lexical)
	var dups []int
	for k := 1; k < n; k++ {
		a, b := idx[k-1], idx[k]
		if slices.Equal(x[a*d:(a+1)*d], x[b*d:(b+1)*d]) {
			dups = append(dups, b) // b > a: the sort breaks ties by index
		}
	}
	slices.Sort(dups)
	return dups
}

// Sphere returns n points drawn uniformly from the unit sphere S² in ℝ³ (d = 3): normalised
// standard normal vectors, which are uniform on the sphere by rotation invariance. It panics
// if n < 0. Cost O(n).
func Sphere(n int, seed uint64) []float64 {
	checkSize(n, 3)
	rng := newRand(seed)
	x := make([]float64, 3*n)
	for i := range n {
		p := x[3*i : 3*i+3]
		for {
			p[0], p[1], p[2] = rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()
			r := math.Sqrt(p[0]*p[0] + p[1]*p[1] + p[2]*p[2])
			if r > 1e-8 {
				p[0], p[1], p[2] = p[0]/r, p[1]/r, p[2]/r
				break
			}
		}
	}
	return x
}

// AnisotropicRatio is the ratio of Anisotropic's short axes to its long one.
const AnisotropicRatio = 0.01

// Anisotropic returns n points drawn uniformly from a box of length 1 along the main diagonal
// direction u = (1, …, 1)/√d and AnisotropicRatio across it in every other direction,
// centred at (½, …, ½): x = c + H z with z uniform in [−½, ½] × [−r/2, r/2]ᵈ⁻¹ and H the
// Householder reflection that maps e₁ to u. The box is not aligned with the coordinate axes,
// and lies inside the unit cube. For d = 1 it is the uniform set on [0, 1). It panics if
// n < 0 or d < 1. Cost O(n d).
func Anisotropic(n, d int, seed uint64) []float64 {
	checkSize(n, d)
	rng := newRand(seed)
	// w = e₁ − u, H = I − 2 w wᵀ / (wᵀ w); for d = 1, w = 0 and H = I.
	w := make([]float64, d)
	for k := range w {
		w[k] = -1 / math.Sqrt(float64(d))
	}
	w[0] += 1
	var ww float64
	for _, v := range w {
		ww += v * v
	}
	x := make([]float64, n*d)
	z := make([]float64, d)
	for i := range n {
		z[0] = rng.Float64() - 0.5
		for k := 1; k < d; k++ {
			z[k] = AnisotropicRatio * (rng.Float64() - 0.5)
		}
		var wz float64
		for k := range d {
			wz += w[k] * z[k]
		}
		p := x[i*d : (i+1)*d]
		for k := range d {
			p[k] = 0.5 + z[k]
			if ww > 0 {
				p[k] -= 2 * wz / ww * w[k]
			}
		}
	}
	return x
}

// EarthRadiusKm is the mean radius of the Earth R₁ = (2a + b)/3 of the Geodetic Reference
// System 1980 adopted by the IUGG (H. Moritz, Geodetic Reference System 1980, Bulletin
// Géodésique 54, 1980), 6371.0088 km to 0.1 m (value quoted from memory).
const EarthRadiusKm = 6371.0088

// ZIPCentroidsFile is the path of the ZIP code area centroids relative to the module root.
const ZIPCentroidsFile = "testdata/zcta_centroids.csv"

// ZIPAreas is the table of the US ZIP code tabulation areas (ZCTAs) in testdata: code and
// centroid. See testdata/README.md for its source and licence.
type ZIPAreas struct {
	// Codes are the five-digit ZCTA codes, leading zeros kept ("00601").
	Codes []string
	// Lat and Lon are the centroids' latitude and longitude in radians, as in the file.
	Lat, Lon []float64
}

// Len returns the number of areas.
func (a *ZIPAreas) Len() int { return len(a.Codes) }

// Project returns the centroids as points in kilometres (d = 2) under the equirectangular
// projection about the mean latitude φ₀ and mean longitude λ₀ of the areas:
// x = R cos φ₀ (λ − λ₀), y = R (φ − φ₀), R = EarthRadiusKm (J. P. Snyder, Map Projections — A
// Working Manual, USGS Professional Paper 1395, 1987, equidistant cylindrical projection).
// Longitudes east of Greenwich (the Western Pacific territories) are taken as λ − 2π, so that
// they lie west of Hawaii as on a Pacific-centred map rather than half a world away.
// North–south distances are exact; east–west ones are off by the factor cos φ₀ / cos φ.
// It also returns φ₀ and λ₀ in radians. Cost O(n).
func (a *ZIPAreas) Project() (points []float64, lat0, lon0 float64) {
	n := a.Len()
	if n == 0 {
		return nil, 0, 0
	}
	lon := make([]float64, n)
	for i, l := range a.Lon {
		if l > 0 {
			l -= 2 * math.Pi
		}
		lon[i] = l
		lat0 += a.Lat[i]
		lon0 += l
	}
	lat0 /= float64(n)
	lon0 /= float64(n)
	scale := EarthRadiusKm * math.Cos(lat0)
	points = make([]float64, 2*n)
	for i := range n {
		points[2*i] = scale * (lon[i] - lon0)
		points[2*i+1] = EarthRadiusKm * (a.Lat[i] - lat0)
	}
	return points, lat0, lon0
}

// ModuleRoot returns the nearest directory at or above the working directory that holds a
// go.mod file, or an error if there is none.
func ModuleRoot() (string, error) {
	dir, err := os.Getwd()
	if err != nil {
		return "", err
	}
	for {
		if _, err := os.Stat(filepath.Join(dir, "go.mod")); err == nil {
			return dir, nil
		}
		parent := filepath.Dir(dir)
		if parent == dir {
			return "", errors.New("bench: no go.mod in the working directory or above it")
		}
		dir = parent
	}
}

// LoadZIPAreas reads ZIPCentroidsFile from the module root (see ModuleRoot).
func LoadZIPAreas() (*ZIPAreas, error) {
	root, err := ModuleRoot()
	if err != nil {
		return nil, err
	}
	return ReadZIPAreas(filepath.Join(root, ZIPCentroidsFile))
}

// ReadZIPAreas reads a ZIP centroid table in the format of testdata/zcta_centroids.csv:
// the header line "zcta,lat_rad,lon_rad", then one line per area with a five-digit code and
// the centroid's latitude in [−π/2, π/2] and longitude in [−π, π] in radians. It returns an
// error naming the file, line and column of the first malformed field, or of a repeated code.
// Cost O(n).
func ReadZIPAreas(path string) (*ZIPAreas, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return parseZIPAreas(f, path)
}

const zipHeader = "zcta,lat_rad,lon_rad"

func parseZIPAreas(r io.Reader, name string) (*ZIPAreas, error) {
	sc := bufio.NewScanner(r)
	line := 0
	a := &ZIPAreas{}
	seen := make(map[string]int)
	for sc.Scan() {
		line++
		text := strings.TrimSuffix(sc.Text(), "\r")
		if line == 1 {
			if text != zipHeader {
				return nil, fmt.Errorf("%s:%d:1: header %q, want %q", name, line, text, zipHeader)
			}
			continue
		}
		fields := strings.Split(text, ",")
		if len(fields) != 3 {
			return nil, fmt.Errorf("%s:%d: %d fields, want 3", name, line, len(fields))
		}
		code := fields[0]
		if len(code) != 5 || strings.IndexFunc(code, func(c rune) bool { return c < '0' || c > '9' }) >= 0 {
			return nil, fmt.Errorf("%s:%d:1: code %q is not five digits", name, line, code)
		}
		if first, ok := seen[code]; ok {
			return nil, fmt.Errorf("%s:%d:1: code %s repeats line %d", name, line, code, first)
		}
		seen[code] = line
		var coord [2]float64
		for k, limit := range [2]float64{math.Pi / 2, math.Pi} {
			v, err := strconv.ParseFloat(fields[k+1], 64)
			if err != nil {
				return nil, fmt.Errorf("%s:%d:%d: %v", name, line, k+2, err)
			}
			if !(math.Abs(v) <= limit) {
				return nil, fmt.Errorf("%s:%d:%d: %v radians is outside [%.7g, %.7g]", name, line, k+2, v, -limit, limit)
			}
			coord[k] = v
		}
		a.Codes = append(a.Codes, code)
		a.Lat = append(a.Lat, coord[0])
		a.Lon = append(a.Lon, coord[1])
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s:%d: %v", name, line+1, err)
	}
	if line == 0 {
		return nil, fmt.Errorf("%s: empty file", name)
	}
	if a.Len() == 0 {
		return nil, fmt.Errorf("%s: no areas", name)
	}
	return a, nil
}

// ZIPCentroids returns the centroids of all US ZIP code tabulation areas in testdata (33,791
// of them), projected to kilometres by ZIPAreas.Project, as points with d = 2 in the order of
// the file. The file is found from the working directory as LoadZIPAreas does.
func ZIPCentroids() ([]float64, error) {
	a, err := LoadZIPAreas()
	if err != nil {
		return nil, err
	}
	points, _, _ := a.Project()
	return points, nil
}

// ZIPSubset returns n of the points of ZIPCentroids chosen uniformly at random without
// replacement (a partial Fisher–Yates shuffle seeded with seed), in the order drawn. The
// projection is that of the full set. It panics if n < 0 and returns an error if n exceeds the
// number of areas. Cost O(N) for the N areas.
func ZIPSubset(n int, seed uint64) ([]float64, error) {
	checkSize(n, 2)
	all, err := ZIPCentroids()
	if err != nil {
		return nil, err
	}
	total := len(all) / 2
	if n > total {
		return nil, fmt.Errorf("bench: subset of %d points requested from %d ZIP areas", n, total)
	}
	rng := newRand(seed)
	idx := make([]int, total)
	for i := range idx {
		idx[i] = i
	}
	out := make([]float64, 2*n)
	for k := range n {
		j := k + rng.IntN(total-k)
		idx[k], idx[j] = idx[j], idx[k]
		copy(out[2*k:2*k+2], all[2*idx[k]:2*idx[k]+2])
	}
	return out, nil
}
