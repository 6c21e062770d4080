//go:build ignore

// Convert extracts the ZIP code tabulation area centroids from the zctas.gz file of the
// Debian package weather-util-data (2.4.4-2) and writes them as CSV with the header
// zcta,lat_rad,lon_rad. The source gives each centroid as "centroid = (lat, lon)" in radians
// with 7 decimals; the numbers are copied verbatim (no conversion, no rounding), so the CSV is
// an exact extract. Areas are written in the order of the source file.
//
// Usage, from the module root:
//
//	dpkg-deb -x weather-util-data_2.4.4-2_all.deb /tmp/wud
//	go run testdata/zcta/convert.go /tmp/wud/usr/share/weather-util/zctas.gz testdata/zcta_centroids.csv
package main

import (
	"bufio"
	"compress/gzip"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

func main() {
	if len(os.Args) != 3 {
		fmt.Fprintln(os.Stderr, "usage: go run convert.go zctas.gz out.csv")
		os.Exit(2)
	}
	if err := convert(os.Args[1], os.Args[2]); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func convert(inPath, outPath string) error {
	in, err := os.Open(inPath)
	if err != nil {
		return err
	}
	defer in.Close()
	gz, err := gzip.NewReader(in)
	if err != nil {
		return fmt.Errorf("%s: %v", inPath, err)
	}
	tmp, err := os.CreateTemp(filepath.Dir(outPath), ".zcta-*.csv")
	if err != nil {
		return err
	}
	defer os.Remove(tmp.Name())
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		return err
	}
	w := bufio.NewWriter(tmp)
	rows, err := extract(w, gz, inPath)
	if err != nil {
		tmp.Close()
		return err
	}
	if err := w.Flush(); err != nil {
		tmp.Close()
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	if err := os.Rename(tmp.Name(), outPath); err != nil {
		return err
	}
	fmt.Fprintf(os.Stderr, "%d areas written to %s\n", rows, outPath)
	return nil
}

// extract writes one CSV row per "[zcta]" section that has a centroid line and returns the
// number of rows. Every section must have exactly one centroid.
func extract(w io.Writer, r io.Reader, name string) (int, error) {
	if _, err := io.WriteString(w, "zcta,lat_rad,lon_rad\n"); err != nil {
		return 0, err
	}
	sc := bufio.NewScanner(r)
	var section string
	var haveCentroid bool
	rows, line := 0, 0
	for sc.Scan() {
		line++
		text := strings.TrimSpace(sc.Text())
		switch {
		case text == "" || strings.HasPrefix(text, "#"):
		case strings.HasPrefix(text, "["):
			if section != "" && !haveCentroid {
				return rows, fmt.Errorf("%s:%d: section [%s] has no centroid", name, line, section)
			}
			section = strings.TrimSuffix(strings.TrimPrefix(text, "["), "]")
			if len(section) != 5 {
				return rows, fmt.Errorf("%s:%d: section name %q is not a 5-digit ZCTA", name, line, section)
			}
			haveCentroid = false
		case strings.HasPrefix(text, "centroid"):
			if haveCentroid {
				return rows, fmt.Errorf("%s:%d: second centroid in [%s]", name, line, section)
			}
			_, value, ok := strings.Cut(text, "=")
			value = strings.TrimSpace(value)
			if !ok || !strings.HasPrefix(value, "(") || !strings.HasSuffix(value, ")") {
				return rows, fmt.Errorf("%s:%d: malformed centroid %q", name, line, text)
			}
			lat, lon, ok := strings.Cut(value[1:len(value)-1], ",")
			lat, lon = strings.TrimSpace(lat), strings.TrimSpace(lon)
			if !ok {
				return rows, fmt.Errorf("%s:%d: malformed centroid %q", name, line, text)
			}
			for _, s := range []string{lat, lon} {
				if _, err := strconv.ParseFloat(s, 64); err != nil {
					return rows, fmt.Errorf("%s:%d: %v", name, line, err)
				}
			}
			if _, err := fmt.Fprintf(w, "%s,%s,%s\n", section, lat, lon); err != nil {
				return rows, err
			}
			haveCentroid = true
			rows++
		}
	}
	if err := sc.Err(); err != nil {
		return rows, err
	}
	if section != "" && !haveCentroid {
		return rows, fmt.Errorf("%s: section [%s] has no centroid", name, section)
	}
	return rows, nil
}
