package main

import (
	"bytes"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func TestReadCSV(t *testing.T) {
	cases := []struct {
		name    string
		input   string
		columns []string
		header  []string
		rows    int
		values  []float64
	}{
		{"all columns", "x,y\n1,2\n3,4\n", nil, []string{"x", "y"}, 2, []float64{1, 2, 3, 4}},
		{"selected columns in their order", "a,x,b,y\n9,1,s,2\n9,3,t,4\n", []string{"y", "x"}, []string{"y", "x"}, 2, []float64{2, 1, 4, 3}},
		{"spaces, exponent, hex, sign", "x\n  1.5e-3 \n-0x1p-2\n+7\n", nil, []string{"x"}, 3, []float64{1.5e-3, -0.25, 7}},
		{"no final newline, CRLF", "x,y\r\n1,2\r\n3,4", nil, []string{"x", "y"}, 2, []float64{1, 2, 3, 4}},
		{"quoted header and field", "\"x, m\",y\n\"1\",2\n", nil, []string{"x, m", "y"}, 1, []float64{1, 2}},
		{"byte-order mark", "\uFEFFx,y\n1,2\n", []string{"x"}, []string{"x"}, 1, []float64{1}},
		{"blank lines skipped", "x\n\n1\n\n2\n", nil, []string{"x"}, 2, []float64{1, 2}},
		{"one column one row", "v\n42\n", nil, []string{"v"}, 1, []float64{42}},
		{"largest float", "v\n1.7976931348623157e308\n", nil, []string{"v"}, 1, []float64{math.MaxFloat64}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			tab, err := readCSV(strings.NewReader(c.input), "in.csv", c.columns)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(tab.header, c.header) || tab.rows != c.rows || tab.cols != len(c.header) || !slices.Equal(tab.values, c.values) {
				t.Fatalf("got header %q rows %d cols %d values %v, want %q %d %d %v", tab.header, tab.rows, tab.cols, tab.values, c.header, c.rows, len(c.header), c.values)
			}
		})
	}
}

func TestReadCSVErrors(t *testing.T) {
	// Lines and columns are counted from 1; the column number is the field's index in its
	// record, the byte number (for malformed quoting) what encoding/csv reports.
	cases := []struct {
		name    string
		input   string
		columns []string
		want    string
	}{
		{"empty file", "", nil, `P.csv: empty file, want a header row and data rows`},
		{"only blank lines", "\n\n", nil, `P.csv: empty file, want a header row and data rows`},
		{"header only", "x,y\n", nil, `P.csv: no data rows (only the header, line 1)`},
		{"header after blank lines", "\n\nx,y\n", nil, `P.csv: no data rows (only the header, line 3)`},
		{"non-numeric", "x,y\n1,2\n3,abc\n", nil, `P.csv: line 3, column 2 ("y"): "abc" is not a number`},
		{"empty field", "x,y\n1,2\n,4\n", nil, `P.csv: line 3, column 1 ("x"): empty field, want a number`},
		{"NaN", "x,y\n1,NaN\n", nil, `P.csv: line 2, column 2 ("y"): "NaN" is not a finite number`},
		{"Inf", "x,y\n-inf,1\n", nil, `P.csv: line 2, column 1 ("x"): "-inf" is not a finite number`},
		{"out of range", "x,y\n1,1e400\n", nil, `P.csv: line 2, column 2 ("y"): "1e400" is outside the range of float64`},
		{"too few fields", "x,y,z\n1,2,3\n4,5\n", nil, `P.csv: line 3: 2 fields, the header has 3: column 3 ("z") is missing`},
		{"too many fields", "x,y\n1,2\n4,5,6\n", nil, `P.csv: line 3: 3 fields, the header has 2: column 3 has no header`},
		{"line counts quoted newlines", "x,y\n\"1\n\",2\n3,q\n", nil, `P.csv: line 4, column 2 ("y"): "q" is not a number`},
		{"line after blank lines", "x\n1\n\n\nz\n", nil, `P.csv: line 5, column 1 ("x"): "z" is not a number`},
		{"unknown column", "x,y\n1,2\n", []string{"x", "z"}, `P.csv: line 1: no column named "z" in the header ("x", "y")`},
		{"ambiguous column", "x,y,x\n1,2,3\n", []string{"x"}, `P.csv: line 1: column name "x" is ambiguous: columns 1 and 3`},
		{"selected column bad", "x,label,y\n1,a,b\n", []string{"x", "y"}, `P.csv: line 2, column 3 ("y"): "b" is not a number`},
		{"bare quote", "x,y\n1,2\"3\n", nil, `P.csv: line 2, byte 4: malformed CSV: bare " in non-quoted-field`},
		{"unterminated quote", "x,y\n1,\"2\n", nil, `P.csv: line 2, byte 6: malformed CSV: extraneous or missing " in quoted-field`},
		{"bad quote in a multi-line record", "x,y\n\"1\n2\"x,3\n", nil, `P.csv: line 3, byte 2 (in the record from line 2): malformed CSV: extraneous or missing " in quoted-field`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := readCSV(strings.NewReader(c.input), "P.csv", c.columns)
			if err == nil {
				t.Fatal("no error")
			}
			if err.Error() != c.want {
				t.Fatalf("error\n  %s\nwant\n  %s", err, c.want)
			}
		})
	}
}

func TestListNamesTruncates(t *testing.T) {
	var header []string
	for i := range 12 {
		header = append(header, fmt.Sprintf("c%d", i))
	}
	want := `"c0", "c1", "c2", "c3", "c4", "c5", "c6", "c7", "c8", "c9", … 2 more`
	if got := listNames(header); got != want {
		t.Fatalf("got %s, want %s", got, want)
	}
}

func FuzzReadCSV(f *testing.F) {
	f.Add("x,y\n1,2\n3,4\n", "")
	f.Add("a,x,b\n9,1,s\n", "x")
	f.Add("x,y\n1,NaN\n", "")
	f.Add("x,y\n\"1\n\",2\n", "y,x")
	f.Add("\uFEFFx\n1e400\n", "x")
	f.Add("x,y\n1,2\"3\n", "")
	f.Add("", "")
	f.Fuzz(func(t *testing.T, input, columnList string) {
		var columns []string
		if columnList != "" {
			columns = strings.Split(columnList, ",")
		}
		tab, err := readCSV(strings.NewReader(input), "F.csv", columns)
		if err != nil {
			if !strings.HasPrefix(err.Error(), "F.csv: ") || strings.Contains(err.Error(), "\n") {
				t.Fatalf("error %q does not start with the file name or spans lines", err)
			}
			return
		}
		if tab.rows < 1 || tab.cols != len(tab.header) || len(tab.values) != tab.rows*tab.cols {
			t.Fatalf("inconsistent table: %d rows, %d cols, %d names, %d values", tab.rows, tab.cols, len(tab.header), len(tab.values))
		}
		if columns != nil && !slices.Equal(tab.header, columns) {
			t.Fatalf("header %q, want the selected %q", tab.header, columns)
		}
		for _, v := range tab.values {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatal("non-finite value accepted")
			}
		}
		if tab.cols == 0 {
			return
		}
		// Property: writing the values with %.17g and reading them back gives the same bits.
		var buf bytes.Buffer
		for c := range tab.cols {
			if c > 0 {
				buf.WriteByte(',')
			}
			fmt.Fprintf(&buf, "c%d", c)
		}
		buf.WriteByte('\n')
		for r := range tab.rows {
			for c := range tab.cols {
				if c > 0 {
					buf.WriteByte(',')
				}
				buf.WriteString(strconv.FormatFloat(tab.values[r*tab.cols+c], 'g', 17, 64))
			}
			buf.WriteByte('\n')
		}
		again, err := readCSV(&buf, "again.csv", nil)
		if err != nil {
			t.Fatal(err)
		}
		for i, v := range tab.values {
			if math.Float64bits(again.values[i]) != math.Float64bits(v) {
				t.Fatalf("value %v reads back as %v", v, again.values[i])
			}
		}
	})
}
