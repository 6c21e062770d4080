package main

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// table is a numeric CSV file as readCSV returns it.
type table struct {
	// header holds the names of the selected columns, in selection order.
	header []string
	// rows is the number of data rows, cols the number of selected columns.
	rows, cols int
	// values holds the selected fields row-major: row r, column c at values[r*cols+c].
	values []float64
}

// readCSV reads a CSV file (RFC 4180, as encoding/csv reads it) whose first record is a
// header row. name, the file's name, starts every error message. When columns is nil every
// column is selected; otherwise columns lists header names, and those columns are selected in
// that order (the others are not parsed). Every selected field must be a finite number
// (strconv.ParseFloat syntax, surrounding spaces allowed), and every record must have as many
// fields as the header. A UTF-8 byte-order mark before the header is ignored.
//
// Errors name the file, the line and the column (its number, from 1, and its header name):
// an empty file, a header without data rows, an unknown or ambiguous column name, a record
// with the wrong number of fields, an empty, non-numeric, NaN, infinite or out-of-range value,
// or malformed CSV quoting (located by line and byte).
func readCSV(r io.Reader, name string, columns []string) (*table, error) {
	cr := csv.NewReader(r)
	cr.FieldsPerRecord = -1 // checked here, for a clearer message
	cr.ReuseRecord = true
	record, err := cr.Read()
	if err == io.EOF {
		return nil, fmt.Errorf("%s: empty file, want a header row and data rows", name)
	}
	if err != nil {
		return nil, csvError(name, err)
	}
	headerLine, _ := cr.FieldPos(0)
	header := make([]string, len(record))
	copy(header, record)
	header[0] = strings.TrimPrefix(header[0], "\uFEFF")

	selected, err := selectColumns(name, headerLine, header, columns)
	if err != nil {
		return nil, err
	}
	t := &table{cols: len(selected)}
	for _, c := range selected {
		t.header = append(t.header, header[c])
	}
	for {
		record, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(name, err)
		}
		line, _ := cr.FieldPos(0)
		if len(record) != len(header) {
			return nil, fieldCountError(name, line, len(record), header)
		}
		for _, c := range selected {
			v, err := parseValue(record[c])
			if err != nil {
				line, _ := cr.FieldPos(c)
				return nil, fmt.Errorf("%s: line %d, column %d (%q): %v", name, line, c+1, header[c], err)
			}
			t.values = append(t.values, v)
		}
		t.rows++
	}
	if t.rows == 0 {
		return nil, fmt.Errorf("%s: no data rows (only the header, line %d)", name, headerLine)
	}
	return t, nil
}

// selectColumns returns the indices of the named columns, or of all columns when names is nil.
func selectColumns(file string, line int, header, names []string) ([]int, error) {
	if names == nil {
		all := make([]int, len(header))
		for i := range all {
			all[i] = i
		}
		return all, nil
	}
	var selected []int
	for _, want := range names {
		found := -1
		for i, h := range header {
			if strings.TrimSpace(h) != want {
				continue
			}
			if found >= 0 {
				return nil, fmt.Errorf("%s: line %d: column name %q is ambiguous: columns %d and %d", file, line, want, found+1, i+1)
			}
			found = i
		}
		if found < 0 {
			return nil, fmt.Errorf("%s: line %d: no column named %q in the header (%s)", file, line, want, listNames(header))
		}
		selected = append(selected, found)
	}
	return selected, nil
}

// listNames returns the header names quoted and comma-separated, the first ten at most.
func listNames(header []string) string {
	const most = 10
	var b strings.Builder
	for i, h := range header {
		if i == most {
			fmt.Fprintf(&b, ", … %d more", len(header)-most)
			break
		}
		if i > 0 {
			b.WriteString(", ")
		}
		fmt.Fprintf(&b, "%q", h)
	}
	return b.String()
}

func fieldCountError(file string, line, got int, header []string) error {
	want := len(header)
	if got < want {
		return fmt.Errorf("%s: line %d: %d fields, the header has %d: column %d (%q) is missing", file, line, got, want, got+1, header[got])
	}
	return fmt.Errorf("%s: line %d: %d fields, the header has %d: column %d has no header", file, line, got, want, want+1)
}

// parseValue parses one field as a finite float64.
func parseValue(field string) (float64, error) {
	s := strings.TrimSpace(field)
	if s == "" {
		return 0, errors.New("empty field, want a number")
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		if errors.Is(err, strconv.ErrRange) {
			return 0, fmt.Errorf("%q is outside the range of float64", s)
		}
		return 0, fmt.Errorf("%q is not a number", s)
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Errorf("%q is not a finite number", s)
	}
	return v, nil
}

// csvError rewrites an encoding/csv error to name the file, line and byte.
func csvError(file string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		if pe.StartLine != pe.Line {
			return fmt.Errorf("%s: line %d, byte %d (in the record from line %d): malformed CSV: %v", file, pe.Line, pe.Column, pe.StartLine, pe.Err)
		}
		return fmt.Errorf("%s: line %d, byte %d: malformed CSV: %v", file, pe.Line, pe.Column, pe.Err)
	}
	return fmt.Errorf("%s: %v", file, err)
}
