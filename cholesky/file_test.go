package cholesky

import (
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"github.com/kchol/kchol/kernels"
	"github.com/kchol/kchol/ordering"
)

// filePoints returns n points uniform in [0, 1)ᵈ from a fixed seed.
func filePoints(n, d int) []float64 {
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, n*d)
	for i := range x {
		x[i] = rng.Float64()
	}
	return x
}

func fileFactor(t testing.TB, n, d int, k kernels.Kernel, s *Settings) *Factor {
	t.Helper()
	f, err := New(context.Background(), filePoints(n, d), d, k, s)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func encode(t testing.TB, f *Factor) []byte {
	t.Helper()
	var buf bytes.Buffer
	n, err := f.WriteTo(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if n != int64(buf.Len()) {
		t.Fatalf("WriteTo returned %d bytes, wrote %d", n, buf.Len())
	}
	return buf.Bytes()
}

// layout gives the byte offsets of a file's sections, computed from the table in the doc
// comment of WriteTo, independently of file.go's reader.
type layout struct {
	n, d, nnz, scales                                         int
	points, order, lengthScale, colStart, rows, values, check int
}

func layoutOf(b []byte) layout {
	le := binary.LittleEndian
	l := layout{d: int(le.Uint32(b[12:])), n: int(le.Uint64(b[16:])), nnz: int(le.Uint64(b[24:]))}
	l.scales = 1
	if b[49] == 1 {
		l.scales = l.d
	}
	l.points = 72 + 8*l.scales
	l.order = l.points + 8*l.n*l.d
	l.lengthScale = l.order + 4*l.n
	l.colStart = l.lengthScale + 8*l.n
	l.rows = l.colStart + 8*(l.n+1)
	l.values = l.rows + 4*l.nnz
	l.check = l.values + 8*l.nnz
	return l
}

// resum recomputes the trailing CRC-32C of a file whose length matches its header.
func resum(b []byte) {
	n := len(b) - 4
	binary.LittleEndian.PutUint32(b[n:], crc32.Checksum(b[:n], crc32.MakeTable(crc32.Castagnoli)))
}

// allValues returns a copy of f's values, column after column.
func allValues(f *Factor) []float64 {
	all := make([]float64, 0, f.NNZ())
	for j := range f.n {
		_, vals := f.col(j)
		all = append(all, vals...)
	}
	return all
}

func sameBits(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float64bits(a[i]) != math.Float64bits(b[i]) {
			return false
		}
	}
	return true
}

// normalised is the kernel as the file stores it: Dimension set to d.
func normalised(k kernels.Stationary) kernels.Stationary {
	k.Dimension = k.Dim()
	if k.LengthScales != nil {
		k.LengthScale = 0
	}
	return k
}

func TestFileRoundTrip(t *testing.T) {
	// Property: Read(WriteTo(f)) has every field bitwise equal to f, so every operation gives
	// the same bits, and writing the read factor again gives the same bytes.
	type tc struct {
		n, d     int
		kernel   kernels.Stationary
		settings Settings
		jittered int
	}
	var cases []tc
	for _, n := range []int{1, 2, 3, 65, 300} {
		for _, d := range []int{1, 2, 3} {
			cases = append(cases,
				tc{n, d, kernels.Stationary{Family: kernels.Matern12, Dimension: d, LengthScale: 0.3}, Settings{}, 0},
				tc{n, d, kernels.Stationary{Family: kernels.Matern32, Dimension: d, Variance: 2.5, LengthScale: 0.2, Nugget: 1e-3}, Settings{Rho: 3}, 0},
				tc{n, d, kernels.Stationary{Family: kernels.Matern52, LengthScales: slices.Repeat([]float64{0.25}, d)[:d]}, Settings{Neighbors: 5}, 2 % (n + 1)},
				tc{n, d, kernels.Stationary{Family: kernels.Gaussian, Dimension: d, LengthScale: 0.1, Nugget: 1e-6}, Settings{Rho: math.Inf(1)}, 0},
			)
		}
	}
	for _, c := range cases {
		c.kernel.LengthScales = slices.Clone(c.kernel.LengthScales)
		for i := range c.kernel.LengthScales {
			c.kernel.LengthScales[i] *= 1 + float64(i)/3 // distinct per-dimension scales
		}
		name := fmt.Sprintf("n=%d/d=%d/%v/scales=%d/rho=%g/m=%d/jittered=%d", c.n, c.d, c.kernel.Family, len(c.kernel.LengthScales), c.settings.Rho, c.settings.Neighbors, c.jittered)
		t.Run(name, func(t *testing.T) {
			f := fileFactor(t, c.n, c.d, c.kernel, &c.settings)
			f.jittered = c.jittered // exercise the field; New rarely needs jitter
			b := encode(t, f)
			// Size from the doc comment: 84 + 8·s + 8·N·d + 20·N + 12·nnz.
			scales := 1
			if c.kernel.LengthScales != nil {
				scales = c.d
			}
			if want := 84 + 8*scales + 8*c.n*c.d + 20*c.n + 12*f.NNZ(); len(b) != want {
				t.Fatalf("file is %d bytes, the documented size is %d", len(b), want)
			}
			g, err := Read(bytes.NewReader(b))
			if err != nil {
				t.Fatal(err)
			}
			checkSameFactor(t, f, g)
			if again := encode(t, g); !bytes.Equal(again, b) {
				t.Fatal("writing the read factor gives different bytes")
			}
		})
	}
}

// checkSameFactor asserts every stored field and every operation of g equals f's, bitwise.
func checkSameFactor(t *testing.T, f, g *Factor) {
	t.Helper()
	if g.n != f.n || g.d != f.d || g.neighbors != f.neighbors || g.jittered != f.jittered ||
		math.Float64bits(g.rho) != math.Float64bits(f.rho) {
		t.Fatalf("scalars differ: n %d/%d d %d/%d m %d/%d jittered %d/%d ρ %v/%v",
			g.n, f.n, g.d, f.d, g.neighbors, f.neighbors, g.jittered, f.jittered, g.rho, f.rho)
	}
	if want := normalised(f.kernel.(kernels.Stationary)); !reflect.DeepEqual(g.kernel, want) {
		t.Fatalf("kernel %+v, want %+v", g.kernel, want)
	}
	switch {
	case !sameBits(g.points, f.points):
		t.Fatal("points differ")
	case !slices.Equal(g.order, f.order):
		t.Fatal("order differs")
	case !slices.Equal(g.position, f.position):
		t.Fatal("position differs")
	case !sameBits(g.lengthScale, f.lengthScale):
		t.Fatal("length scales differ")
	case !slices.Equal(g.colStart, f.colStart):
		t.Fatal("column starts differ")
	case !sameColumnRows(g, f):
		t.Fatal("rows differ")
	case !sameBits(allValues(g), allValues(f)):
		t.Fatal("values differ")
	}
	if math.Float64bits(g.LogDet()) != math.Float64bits(f.LogDet()) {
		t.Fatalf("LogDet %v, want %v", g.LogDet(), f.LogDet())
	}
	rng := rand.New(rand.NewPCG(1, 1))
	b := make([]float64, f.n)
	for i := range b {
		b[i] = rng.NormFloat64()
	}
	ops := map[string]func(*Factor) []float64{
		"SolveTo":    func(h *Factor) []float64 { return h.SolveTo(nil, b) },
		"MulCovTo":   func(h *Factor) []float64 { return h.MulCovTo(nil, b) },
		"MulLTo":     func(h *Factor) []float64 { return h.MulLTo(nil, b) },
		"MulLTTo":    func(h *Factor) []float64 { return h.MulLTTo(nil, b) },
		"SolveLTo":   func(h *Factor) []float64 { return h.SolveLTo(nil, b) },
		"SolveLTTo":  func(h *Factor) []float64 { return h.SolveLTTo(nil, b) },
		"SampleTo":   func(h *Factor) []float64 { return h.SampleTo(nil, rand.New(rand.NewPCG(2, 2))) },
		"Points":     func(h *Factor) []float64 { return h.Points() },
		"LengthScal": func(h *Factor) []float64 { return h.LengthScales() },
		"SolveColumnsTo": func(h *Factor) []float64 {
			rhs := mat.NewDense(f.n, 2, nil)
			rhs.SetCol(0, b)
			rhs.SetCol(1, slices.Repeat([]float64{1}, f.n))
			return h.SolveColumnsTo(nil, rhs, 2).RawMatrix().Data
		},
	}
	for name, op := range ops {
		if !sameBits(op(g), op(f)) {
			t.Errorf("%s differs after the round trip", name)
		}
	}
}

func TestFileRoundTripGivenPattern(t *testing.T) {
	// A factor from NewFromPattern has neither ρ nor m; the file keeps both at 0.
	const n, d = 40, 2
	points := filePoints(n, d)
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: d, LengthScale: 0.3}
	ord := ordering.ReverseMaximin(points, d, nil)
	permuted := make([]float64, len(points))
	for p, i := range ord.Order {
		copy(permuted[p*d:(p+1)*d], points[i*d:(i+1)*d])
	}
	pat := ordering.NearestNeighbors(permuted, d, 4)
	f, err := NewFromPattern(context.Background(), points, d, k, ord, pat, nil)
	if err != nil {
		t.Fatal(err)
	}
	g, err := Read(bytes.NewReader(encode(t, f)))
	if err != nil {
		t.Fatal(err)
	}
	checkSameFactor(t, f, g)
}

func TestFileLayoutAsDocumented(t *testing.T) {
	// Source: the layout table in WriteTo's doc comment, decoded here plainly field by field,
	// the way another program would, and compared with the factor's own accessors.
	k := kernels.Stationary{Family: kernels.Matern52, Variance: 1.5, LengthScales: []float64{0.3, 0.7}, Nugget: 0.01}
	f := fileFactor(t, 20, 2, k, &Settings{Neighbors: 4})
	b := encode(t, f)
	le := binary.LittleEndian
	l := layoutOf(b)
	if string(b[:8]) != "KCHOLFAC" || le.Uint32(b[8:]) != 2 {
		t.Fatalf("magic %q version %d", b[:8], le.Uint32(b[8:]))
	}
	if l.d != 2 || l.n != 20 || l.nnz != f.NNZ() {
		t.Fatalf("header d=%d N=%d nnz=%d", l.d, l.n, l.nnz)
	}
	if rho, m := math.Float64frombits(le.Uint64(b[32:])), le.Uint32(b[40:]); rho != 0 || m != 4 {
		t.Fatalf("ρ = %v, m = %d", rho, m)
	}
	if b[48] != 3 || b[49] != 1 || !bytes.Equal(b[50:56], make([]byte, 6)) {
		t.Fatalf("family code %d, kind %d, selection, reserved and candidates %v", b[48], b[49], b[50:56])
	}
	// A greedy factor records the selection and its candidates.
	g := encode(t, fileFactor(t, 20, 2, k, &Settings{Neighbors: 4, Greedy: true, Candidates: 9}))
	if g[50] != 1 || g[51] != 0 || le.Uint32(g[52:]) != 9 {
		t.Fatalf("greedy header bytes %v, want selection 1 and 9 candidates", g[50:56])
	}
	if back, err := Read(bytes.NewReader(g)); err != nil {
		t.Fatal(err)
	} else if greedy, c := back.Greedy(); !greedy || c != 9 {
		t.Fatalf("read back greedy %v with %d candidates", greedy, c)
	}
	// A joint greedy factor records selection 2.
	jg := encode(t, fileFactor(t, 60, 2, k, &Settings{Neighbors: 4, Greedy: true, JointGreedy: true, Lambda: 2}))
	if jg[50] != 2 {
		t.Fatalf("joint greedy selection byte %d, want 2", jg[50])
	}
	if back, err := Read(bytes.NewReader(jg)); err != nil || !back.JointGreedy() {
		t.Fatalf("joint greedy read back: %v, err %v", back != nil && back.JointGreedy(), err)
	}
	// A version 1 file (this layout with bytes 50–55 zero) is still read.
	v1 := bytes.Clone(b)
	le.PutUint32(v1[8:], 1)
	le.PutUint32(v1[len(v1)-4:], crc32.Checksum(v1[:len(v1)-4], crc32.MakeTable(crc32.Castagnoli)))
	if _, err := Read(bytes.NewReader(v1)); err != nil {
		t.Fatalf("version 1: %v", err)
	}
	f64 := func(off int) float64 { return math.Float64frombits(le.Uint64(b[off:])) }
	if f64(56) != 1.5 || f64(64) != 0.01 || f64(72) != 0.3 || f64(80) != 0.7 {
		t.Fatalf("kernel floats %v %v %v %v", f64(56), f64(64), f64(72), f64(80))
	}
	users := f.Points() // user order
	order := f.Order()
	for p := range l.n {
		u := int(le.Uint32(b[l.order+4*p:]))
		if u != order[p] {
			t.Fatalf("order[%d] = %d, want %d", p, u, order[p])
		}
		for c := range l.d {
			if got := f64(l.points + 8*(p*l.d+c)); got != users[u*l.d+c] {
				t.Fatalf("position %d coordinate %d = %v, want user point %d's %v", p, c, got, u, users[u*l.d+c])
			}
		}
		if f64(l.lengthScale+8*p) != f.LengthScales()[p] {
			t.Fatalf("length scale %d differs", p)
		}
	}
	if s := le.Uint64(b[l.colStart+8*l.n:]); int(s) != l.nnz {
		t.Fatalf("last column start %d, want nnz %d", s, l.nnz)
	}
	// log det Θ̃ = −2 Σ log Lⱼⱼ from the documented rows and values.
	var logDet float64
	for j := range l.n {
		s := int(le.Uint64(b[l.colStart+8*j:]))
		if r := int32(le.Uint32(b[l.rows+4*s:])); int(r) != j {
			t.Fatalf("column %d starts with row %d", j, r)
		}
		logDet -= 2 * math.Log(f64(l.values+8*s))
	}
	if logDet != f.LogDet() {
		t.Fatalf("log det from the file %v, want %v", logDet, f.LogDet())
	}
	if l.check+4 != len(b) {
		t.Fatalf("checksum at %d, file is %d bytes", l.check, len(b))
	}
	// CRC-32C of the standard check string "123456789" is e3069283 (RFC 3720 B.4, common
	// practice for verifying a CRC implementation); it confirms which polynomial we mean.
	if c := crc32.Checksum([]byte("123456789"), crc32.MakeTable(crc32.Castagnoli)); c != 0xe3069283 {
		t.Fatalf("CRC-32C check value %08x", c)
	}
	if got, want := le.Uint32(b[l.check:]), crc32.Checksum(b[:l.check], crc32.MakeTable(crc32.Castagnoli)); got != want {
		t.Fatalf("stored checksum %08x, CRC-32C of the preceding bytes %08x", got, want)
	}
}

func smallFile(t testing.TB) []byte {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.4}
	return encode(t, fileFactor(t, 12, 2, k, &Settings{Neighbors: 3}))
}

func TestReadTruncated(t *testing.T) {
	b := smallFile(t)
	for cut := 0; cut < len(b); cut++ {
		t.Run(fmt.Sprintf("cut=%d", cut), func(t *testing.T) {
			_, err := Read(bytes.NewReader(b[:cut]))
			if err == nil || !strings.Contains(err.Error(), "truncated") {
				t.Fatalf("Read of the first %d of %d bytes: error %v, want truncated", cut, len(b), err)
			}
		})
	}
	// ReadFile checks the size against the header before reading the arrays.
	path := filepath.Join(t.TempDir(), "f")
	if err := os.WriteFile(path, b[:len(b)-9], 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := ReadFile(path)
	if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "header declares") {
		t.Fatalf("ReadFile of a truncated file: %v", err)
	}
}

func TestReadTrailingData(t *testing.T) {
	b := smallFile(t)
	extra := append(slices.Clone(b), "tail"...)
	// Read consumes exactly the factor's bytes.
	r := bytes.NewReader(extra)
	if _, err := Read(r); err != nil {
		t.Fatal(err)
	}
	if rest, _ := io.ReadAll(r); string(rest) != "tail" {
		t.Fatalf("Read left %q, want the trailing %q", rest, "tail")
	}
	path := filepath.Join(t.TempDir(), "f")
	if err := os.WriteFile(path, extra, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadFile(path); err == nil || !strings.Contains(err.Error(), "trailing") {
		t.Fatalf("ReadFile with trailing bytes: %v", err)
	}
}

func TestReadFlippedByte(t *testing.T) {
	// Every single-byte change is caught: CRC-32C detects all bursts of up to 32 bits (a
	// standard property of any CRC of degree 32), and header changes that alter the sizes
	// fail a structural check, a truncation or the checksum. Changes past the header leave
	// the sizes alone, so they must be reported as checksum mismatches.
	b := smallFile(t)
	l := layoutOf(b)
	for off := range b {
		for _, mask := range []byte{0x01, 0x80, 0xff} {
			t.Run(fmt.Sprintf("offset=%d/mask=%#x", off, mask), func(t *testing.T) {
				c := slices.Clone(b)
				c[off] ^= mask
				_, err := Read(bytes.NewReader(c))
				if err == nil {
					t.Fatal("corrupted file read without error")
				}
				if off >= l.points && !strings.Contains(err.Error(), "checksum mismatch") {
					t.Fatalf("error %q, want a checksum mismatch", err)
				}
			})
		}
	}
}

func TestReadBadHeader(t *testing.T) {
	b := smallFile(t)
	cases := []struct {
		name   string
		mutate func(c []byte)
		want   string
	}{
		{"wrong magic", func(c []byte) { copy(c, "NOTAFILE") }, "bad magic"},
		{"version 3", func(c []byte) { binary.LittleEndian.PutUint32(c[8:], 3) }, "unsupported format version 3"},
		{"version 0", func(c []byte) { binary.LittleEndian.PutUint32(c[8:], 0) }, "unsupported format version 0"},
		{"d=0", func(c []byte) { binary.LittleEndian.PutUint32(c[12:], 0) }, "dimension d = 0"},
		{"N=0", func(c []byte) { binary.LittleEndian.PutUint64(c[16:], 0) }, "N = 0"},
		{"N huge", func(c []byte) { binary.LittleEndian.PutUint64(c[16:], 1<<40) }, "N = 1099511627776"},
		{"nnz<N", func(c []byte) { binary.LittleEndian.PutUint64(c[24:], 11) }, "nnz = 11"},
		{"nnz>N(N+1)/2", func(c []byte) { binary.LittleEndian.PutUint64(c[24:], 79) }, "nnz = 79"},
		{"rho and m", func(c []byte) { binary.LittleEndian.PutUint64(c[32:], math.Float64bits(2)) }, "both the radius pattern"},
		{"rho NaN", func(c []byte) {
			binary.LittleEndian.PutUint64(c[32:], math.Float64bits(math.NaN()))
			binary.LittleEndian.PutUint32(c[40:], 0)
		}, "pattern ρ = NaN"},
		{"jittered>N", func(c []byte) { binary.LittleEndian.PutUint32(c[44:], 13) }, "13 jittered columns"},
		{"family 0", func(c []byte) { c[48] = 0 }, "unknown kernel family code 0"},
		{"family 5", func(c []byte) { c[48] = 5 }, "unknown kernel family code 5"},
		{"kind 2", func(c []byte) { c[49] = 2 }, "unknown length-scale kind 2"},
		{"reserved", func(c []byte) { c[51] = 1 }, "reserved byte 51"},
		{"candidates without greedy", func(c []byte) { c[53] = 1 }, "greedy candidates for a pattern that is not greedy"},
		{"unknown selection", func(c []byte) { c[50] = 3 }, "unknown pattern selection 3"},
		{"version 1 with a selection byte", func(c []byte) { binary.LittleEndian.PutUint32(c[8:], 1); c[50] = 1 }, "reserved header bytes 50–55"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := slices.Clone(b)
			c.mutate(x)
			resum(x)
			_, err := Read(bytes.NewReader(x))
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
		})
	}
}

func TestReadStructuralErrors(t *testing.T) {
	// Files with a correct checksum but inconsistent contents, each against its check.
	b := smallFile(t)
	l := layoutOf(b)
	le := binary.LittleEndian
	putF := func(c []byte, off int, v float64) { le.PutUint64(c[off:], math.Float64bits(v)) }
	col := func(c []byte, j int) int { return int(le.Uint64(c[l.colStart+8*j:])) }
	// A column with at least two rows, for ordering and range checks.
	long := -1
	for j := range l.n {
		if col(b, j+1)-col(b, j) >= 2 {
			long = j
			break
		}
	}
	if long < 0 {
		t.Fatal("no column with two rows")
	}
	cases := []struct {
		name   string
		mutate func(c []byte)
		want   string
	}{
		{"rows not ascending", func(c []byte) {
			s := col(c, long)
			le.PutUint32(c[l.rows+4*(s+1):], uint32(long))
		}, "not strictly ascending"},
		{"row out of range", func(c []byte) {
			le.PutUint32(c[l.rows+4*(col(c, long+1)-1):], uint32(l.n))
		}, "out of range"},
		{"negative row", func(c []byte) {
			le.PutUint32(c[l.rows+4*(col(c, long+1)-1):], math.MaxUint32)
		}, "row -1 out of range"},
		{"first row not diagonal", func(c []byte) { le.PutUint32(c[l.rows+4*col(c, 3):], 4) }, "column 3 starts with row 4, not its diagonal"},
		{"zero diagonal", func(c []byte) { putF(c, l.values+8*col(c, 2), 0) }, "column 2: diagonal 0"},
		{"negative diagonal", func(c []byte) { putF(c, l.values+8*col(c, 2), -1) }, "column 2: diagonal -1"},
		{"NaN value", func(c []byte) { putF(c, l.values+8*(col(c, long)+1), math.NaN()) }, "value NaN"},
		{"Inf value", func(c []byte) { putF(c, l.values+8*(col(c, long)+1), math.Inf(-1)) }, "value -Inf"},
		{"Inf point", func(c []byte) { putF(c, l.points+8*3, math.Inf(1)) }, "position 1, coordinate 1 is +Inf"},
		{"NaN length scale", func(c []byte) { putF(c, l.lengthScale+8*4, math.NaN()) }, "length scale of position 4 is NaN"},
		{"negative length scale", func(c []byte) { putF(c, l.lengthScale, -1) }, "length scale of position 0 is -1"},
		{"order repeats", func(c []byte) { copy(c[l.order+4:l.order+8], c[l.order:l.order+4]) }, "not a permutation"},
		{"order out of range", func(c []byte) { le.PutUint32(c[l.order+8:], 12) }, "order[2] = 12 out of range"},
		{"column starts not at 0", func(c []byte) { le.PutUint64(c[l.colStart:], 1) }, "column starts run from 1"},
		{"empty column", func(c []byte) { le.PutUint64(c[l.colStart+8*5:], uint64(col(c, 4))) }, "column 4 is empty"},
		{"column start beyond nnz", func(c []byte) { le.PutUint64(c[l.colStart+8*5:], 1<<40) }, "column start 5"},
		{"negative nugget", func(c []byte) { putF(c, 64, -1) }, "kernel parameters invalid"},
		{"zero kernel length scale", func(c []byte) { putF(c, 72, 0) }, "kernel parameters invalid"},
		{"NaN variance", func(c []byte) { putF(c, 56, math.NaN()) }, "kernel parameters invalid"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			x := slices.Clone(b)
			c.mutate(x)
			resum(x)
			_, err := Read(bytes.NewReader(x))
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Fatalf("error %v, want one containing %q", err, c.want)
			}
			if !strings.HasPrefix(err.Error(), "cholesky: factor file: ") {
				t.Fatalf("error %q lacks the package prefix", err)
			}
		})
	}
}

func TestReadHugeHeaderAllocatesLittle(t *testing.T) {
	// A header declaring the largest sizes the format allows, followed by a few bytes, must
	// fail as truncated without allocating anything like the declared size (many GB).
	h := smallFile(t)[:headerSize+64]
	binary.LittleEndian.PutUint32(h[12:], maxFileDimension)
	binary.LittleEndian.PutUint64(h[16:], math.MaxInt32-1)
	binary.LittleEndian.PutUint64(h[24:], maxFileEntries)
	const allowed = 8 << 20 // bytes: a few 64 KiB chunks plus the header, with room to spare
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	_, err := Read(bytes.NewReader(h))
	runtime.ReadMemStats(&after)
	if err == nil || !strings.Contains(err.Error(), "truncated") {
		t.Fatalf("error %v, want truncated", err)
	}
	if got := after.TotalAlloc - before.TotalAlloc; got > allowed {
		t.Fatalf("Read allocated %d bytes for a %d-byte input", got, len(h))
	}
}

// otherKernel is a kernel that the file format cannot store.
type otherKernel struct{ kernels.Stationary }

func TestWriteNonStationaryKernel(t *testing.T) {
	k := otherKernel{kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.3}}
	f := fileFactor(t, 10, 2, k, nil)
	var buf bytes.Buffer
	n, err := f.WriteTo(&buf)
	if err == nil || !strings.Contains(err.Error(), "only kernels.Stationary") {
		t.Fatalf("WriteTo error %v", err)
	}
	if n != 0 || buf.Len() != 0 {
		t.Fatalf("WriteTo wrote %d bytes (reported %d) before failing", buf.Len(), n)
	}
	// A pointer to a Stationary kernel is accepted and read back as a value.
	ks := &kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.3}
	g := fileFactor(t, 10, 2, ks, nil)
	h, err := Read(bytes.NewReader(encode(t, g)))
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(h.kernel, kernels.Kernel(*ks)) {
		t.Fatalf("kernel %+v, want %+v", h.kernel, *ks)
	}
}

func dirNames(t *testing.T, dir string) []string {
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	return names
}

func TestWriteFile(t *testing.T) {
	k := kernels.Stationary{Family: kernels.Matern32, Dimension: 2, LengthScale: 0.3}
	f := fileFactor(t, 50, 2, k, nil)
	dir := t.TempDir()
	path := filepath.Join(dir, "factor.kchol")
	if err := os.WriteFile(path, []byte("old contents"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := f.WriteFile(path); err != nil {
		t.Fatal(err)
	}
	if names := dirNames(t, dir); !slices.Equal(names, []string{"factor.kchol"}) {
		t.Fatalf("directory holds %v, want only the factor", names)
	}
	g, err := ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	checkSameFactor(t, f, g)
	if b, _ := os.ReadFile(path); !bytes.Equal(b, encode(t, f)) {
		t.Fatal("file contents differ from WriteTo's bytes")
	}
}

func TestWriteFileFailureKeepsExistingFile(t *testing.T) {
	good := fileFactor(t, 20, 2, kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.3}, nil)
	bad := fileFactor(t, 20, 2, otherKernel{kernels.Stationary{Family: kernels.Matern12, Dimension: 2, LengthScale: 0.3}}, nil)
	t.Run("unserialisable kernel", func(t *testing.T) {
		dir := t.TempDir()
		path := filepath.Join(dir, "f")
		if err := os.WriteFile(path, []byte("precious"), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := bad.WriteFile(path); err == nil {
			t.Fatal("no error")
		}
		if b, _ := os.ReadFile(path); string(b) != "precious" {
			t.Fatalf("existing file now holds %q", b)
		}
		if names := dirNames(t, dir); !slices.Equal(names, []string{"f"}) {
			t.Fatalf("directory holds %v", names)
		}
	})
	t.Run("rename onto a directory", func(t *testing.T) {
		dir := t.TempDir()
		path := filepath.Join(dir, "f")
		if err := os.Mkdir(path, 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(path, "inside"), []byte("precious"), 0o644); err != nil {
			t.Fatal(err)
		}
		err := good.WriteFile(path)
		if err == nil || !strings.Contains(err.Error(), path) {
			t.Fatalf("error %v, want one naming %s", err, path)
		}
		if names := dirNames(t, dir); !slices.Equal(names, []string{"f"}) {
			t.Fatalf("directory holds %v: a temporary file was left", names)
		}
		if b, _ := os.ReadFile(filepath.Join(path, "inside")); string(b) != "precious" {
			t.Fatalf("existing contents now %q", b)
		}
	})
	t.Run("missing directory", func(t *testing.T) {
		path := filepath.Join(t.TempDir(), "no", "such", "f")
		if err := good.WriteFile(path); err == nil || !strings.Contains(err.Error(), path) {
			t.Fatalf("error %v, want one naming %s", err, path)
		}
	})
}

func FuzzRead(f *testing.F) {
	valid := smallFile(f)
	perDimension := encode(f, fileFactor(f, 6, 3, kernels.Stationary{Family: kernels.Gaussian, LengthScales: []float64{0.5, 1, 2}, Nugget: 1e-4}, &Settings{Rho: 2}))
	one := encode(f, fileFactor(f, 1, 1, kernels.Stationary{Family: kernels.Matern52, Dimension: 1, LengthScale: 1}, nil))
	f.Add(valid)
	f.Add(perDimension)
	f.Add(one)
	f.Add(valid[:len(valid)/2])
	f.Add(valid[:headerSize])
	flipped := slices.Clone(valid)
	flipped[len(flipped)/2] ^= 0x10
	f.Add(flipped)
	f.Add([]byte{})
	f.Add([]byte(fileMagic))
	f.Fuzz(func(t *testing.T, data []byte) {
		g, err := Read(bytes.NewReader(data))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "cholesky: factor file: ") {
				t.Fatalf("error %q lacks the prefix", err)
			}
			return
		}
		checkConsistent(t, g)
		// The format is canonical: the factor re-encodes to the bytes it was read from.
		var buf bytes.Buffer
		if _, err := g.WriteTo(&buf); err != nil {
			t.Fatal(err)
		}
		if !bytes.HasPrefix(data, buf.Bytes()) {
			t.Fatal("re-encoding differs from the input")
		}
	})
}

// checkConsistent asserts, with plain loops, the invariants every Factor must satisfy.
func checkConsistent(t *testing.T, f *Factor) {
	t.Helper()
	n, d := f.n, f.d
	k, ok := f.kernel.(kernels.Stationary)
	if !ok || k.Validate() != nil || k.Dim() != d {
		t.Fatalf("kernel %+v invalid for d = %d", f.kernel, d)
	}
	if len(f.points) != n*d || len(f.order) != n || len(f.position) != n || len(f.lengthScale) != n || len(f.colStart) != n+1 {
		t.Fatal("array lengths inconsistent with N and d")
	}
	for p, u := range f.order {
		if u < 0 || u >= n || f.position[u] != p {
			t.Fatalf("position is not the inverse of order at %d", p)
		}
	}
	if f.colStart[0] != 0 || int(f.colStart[n]) != len(allValues(f)) || len(f.rowStart) != n {
		t.Fatal("column starts inconsistent")
	}
	for j := range n {
		if f.rowStart[j] < 0 || f.rowStart[j]+f.colStart[j+1]-f.colStart[j] > int64(len(f.rows)) {
			t.Fatalf("column %d rows out of the stored range", j)
		}
		rows, vals := f.col(j)
		if len(rows) == 0 || int(rows[0]) != j || !(vals[0] > 0) {
			t.Fatalf("column %d does not start with a positive diagonal", j)
		}
		for a := 1; a < len(rows); a++ {
			if rows[a] <= rows[a-1] || int(rows[a]) >= n {
				t.Fatalf("column %d rows %v", j, rows)
			}
		}
	}
	for _, v := range slices.Concat(f.points, allValues(f)) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			t.Fatal("non-finite point or value")
		}
	}
	if (f.rho != 0 && f.neighbors != 0) || f.jittered > n || f.jittered < 0 {
		t.Fatal("pattern description inconsistent")
	}
	// The operations run without panicking on a consistent factor.
	f.LogDet()
	f.SolveTo(nil, slices.Repeat([]float64{1}, n))
}

// sameColumnRows reports whether every column of g has the same rows as in f.
func sameColumnRows(g, f *Factor) bool {
	if g.n != f.n {
		return false
	}
	for j := range f.n {
		a, _ := g.col(j)
		b, _ := f.col(j)
		if !slices.Equal(a, b) {
			return false
		}
	}
	return true
}
