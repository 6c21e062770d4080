//go:build ignore

// Generate writes the invented Valmere basin air-quality survey that kchol demo embeds:
// 50,000 sensor sites in a 120 km × 80 km region with one PM2.5 reading each, as a
// gzip-compressed CSV with the header x_km,y_km,pm25. Nothing in it is real: the basin, its
// towns, its valley and its readings are made up for demonstrations. See README.md.
//
// Usage, from the module root:
//
//	go run cmd/kchol/demodata/generate.go cmd/kchol/demodata/valmere_sites.csv.gz
package main

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
)

const (
	sites          = 50000
	width, height  = 120.0, 80.0 // km
	seed           = 20240611
	backgroundFrac = 0.20 // sites spread uniformly over the region
	valleyFrac     = 0.30 // sites along the valley floor
	valleyWidth    = 2.5  // km, standard deviation across the valley
)

// town is an invented settlement: centre (km), spread of its sites (km), share of the town
// sites and the strength of its PM2.5 plume (µg/m³).
type town struct {
	name         string
	x, y, spread float64
	share, plume float64
}

var towns = []town{
	{"Valmere", 58, 41, 3.0, 0.30, 9},
	{"Brackenford", 22, 33, 2.0, 0.15, 6},
	{"Lune Crossing", 91, 47, 2.2, 0.15, 6},
	{"Harrowmede", 40, 62, 1.5, 0.10, 4},
	{"Ostry", 104, 22, 1.2, 0.08, 3},
	{"Pellin", 12, 68, 0.8, 0.07, 2},
	{"Quarry Gate", 75, 15, 1.0, 0.08, 5},
	{"Sedge End", 112, 70, 0.6, 0.07, 2},
}

// valleyY is the valley floor's centre line y(x), in km.
func valleyY(x float64) float64 {
	return 38 + 10*math.Sin(2*math.Pi*x/150) + 4*math.Sin(2*math.Pi*x/47+1)
}

// reflect folds t into [0, L] by reflection at the edges.
func reflect(t, L float64) float64 {
	t = math.Mod(math.Abs(t), 2*L)
	if t > L {
		t = 2*L - t
	}
	return t
}

// field is a smooth random field with Matérn 3/2 covariance of length scale ell and standard
// deviation sd, approximated by random Fourier features (A. Rahimi, B. Recht, Random features
// for large-scale kernel machines, NIPS 2007): frequencies from the Matérn spectral density
// (Rasmussen & Williams 2006, eq. 4.15), which is a multivariate Student t with 2ν = 3 degrees
// of freedom scaled by 1/ℓ.
type field struct {
	wx, wy, phase []float64
	amp           float64
}

func newField(rng *rand.Rand, features int, ell, sd float64) *field {
	f := &field{amp: sd * math.Sqrt(2/float64(features))}
	const nu = 1.5
	for range features {
		var chi2 float64
		for range 3 { // χ² with 2ν = 3 degrees of freedom
			z := rng.NormFloat64()
			chi2 += z * z
		}
		s := math.Sqrt(2*nu/chi2) / ell
		f.wx = append(f.wx, s*rng.NormFloat64())
		f.wy = append(f.wy, s*rng.NormFloat64())
		f.phase = append(f.phase, 2*math.Pi*rng.Float64())
	}
	return f
}

func (f *field) at(x, y float64) float64 {
	var s float64
	for i := range f.wx {
		s += math.Cos(f.wx[i]*x + f.wy[i]*y + f.phase[i])
	}
	return f.amp * s
}

func main() {
	if len(os.Args) != 2 {
		fmt.Fprintln(os.Stderr, "usage: go run generate.go out.csv.gz")
		os.Exit(2)
	}
	if err := write(os.Args[1]); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func write(path string) error {
	rng := rand.New(rand.NewPCG(seed, seed))
	var cumulative []float64
	var total float64
	for _, t := range towns {
		total += t.share
		cumulative = append(cumulative, total)
	}
	// Sites, rounded to 1 m; a site that lands on an earlier one (after rounding) is drawn
	// again, so no two sites coincide.
	type site struct{ x, y float64 }
	seen := make(map[site]bool, sites)
	var xs, ys []float64
	for len(xs) < sites {
		var x, y float64
		switch u := rng.Float64(); {
		case u < backgroundFrac:
			x, y = width*rng.Float64(), height*rng.Float64()
		case u < backgroundFrac+valleyFrac:
			x = width * rng.Float64()
			y = valleyY(x) + valleyWidth*rng.NormFloat64()
		default:
			v := total * rng.Float64()
			k := 0
			for k < len(towns)-1 && v > cumulative[k] {
				k++
			}
			t := towns[k]
			x, y = t.x+t.spread*rng.NormFloat64(), t.y+t.spread*rng.NormFloat64()
		}
		x = math.Round(reflect(x, width)*1000) / 1000
		y = math.Round(reflect(y, height)*1000) / 1000
		if seen[site{x, y}] {
			continue
		}
		seen[site{x, y}] = true
		xs, ys = append(xs, x), append(ys, y)
	}
	// Readings: regional background, town plumes, a valley inversion term, a smooth random
	// field and measurement noise, all invented.
	const (
		regional   = 8.0 // µg/m³
		inversion  = 3.0 // µg/m³ on the valley floor
		inversionW = 4.0 // km
		fieldSD    = 2.5 // µg/m³
		fieldScale = 5.0 // km
		noiseSD    = 0.5 // µg/m³
		features   = 400
		minReading = 1.0
	)
	smooth := newField(rng, features, fieldScale, fieldSD)
	tmp, err := os.CreateTemp(filepath.Dir(path), ".valmere-*.csv.gz")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return err
	}
	gz, err := gzip.NewWriterLevel(tmp, gzip.BestCompression)
	if err != nil {
		return err
	}
	w := bufio.NewWriter(gz)
	fmt.Fprintln(w, "x_km,y_km,pm25")
	for i := range xs {
		x, y := xs[i], ys[i]
		r := regional + smooth.at(x, y) + noiseSD*rng.NormFloat64()
		for _, t := range towns {
			dx, dy := x-t.x, y-t.y
			r += t.plume * math.Exp(-(dx*dx+dy*dy)/(2*4*t.spread*t.spread))
		}
		dv := y - valleyY(x)
		r += inversion * math.Exp(-dv*dv/(2*inversionW*inversionW))
		fmt.Fprintf(w, "%.3f,%.3f,%.2f\n", x, y, math.Max(minReading, r))
	}
	if err := w.Flush(); err != nil {
		return err
	}
	if err := gz.Close(); err != nil {
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}
