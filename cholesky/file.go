package cholesky

// The block below is the "File format" section of the package comment; it belongs in doc.go.
//
// # File format
//
// WriteTo and WriteFile store a Factor in a binary file that Read and ReadFile load back with
// every field bitwise equal (the construction timings are not stored). All integers and floats
// are little-endian; floats are IEEE 754 binary64. The file is a fixed 72-byte header, the
// kernel's length scales, six arrays and a checksum, with no padding between them:
//
//	offset  size      type     field
//	0       8         bytes    magic: the ASCII bytes "KCHOLFAC"
//	8       4         uint32   format version, 2 (version 1 files, with bytes 50–55 zero, are read too)
//	12      4         uint32   d, the dimension of the points, 1 ≤ d ≤ 65536
//	16      8         uint64   N, the number of points, 1 ≤ N < 2³¹−1
//	24      8         uint64   nnz, the number of stored entries of L, N ≤ nnz ≤ min(N(N+1)/2, 2⁵⁶)
//	32      8         float64  ρ of the radius pattern; 0 if not a radius pattern, else > 0 (+Inf: full)
//	40      4         uint32   m of the nearest-neighbour pattern; 0 if not one. ρ and m are not
//	                           both non-zero; both 0 means a pattern given by the caller
//	44      4         uint32   number of columns whose local block needed a jitter, ≤ N
//	48      1         uint8    kernel family: 1 Matérn 1/2, 2 Matérn 3/2, 3 Matérn 5/2, 4 Gaussian
//	49      1         uint8    length-scale kind: 0 one length scale shared by all dimensions
//	                           (s = 1), 1 one per dimension (s = d)
//	50      1         uint8    selection of the nearest-neighbour pattern: 0 the m nearest, 1 greedy
//	                           per column, 2 greedy per supernode (version 2; 0 in version 1)
//	51      1         -        reserved, zero
//	52      4         uint32   candidates c of the greedy selection; 0 unless greedy (version 2)
//	56      8         float64  variance σ² (0 means 1, as in kernels.Stationary)
//	64      8         float64  nugget, ≥ 0
//	72      8·s       float64  the length scale(s) of the kernel, finite and > 0
//	A       8·N·d     float64  points in position order, row-major: point p at A + 8·d·p
//	        4·N       uint32   order: the user index (input row) of position p, a permutation
//	        8·N       float64  maximin length scale ℓ of position p, ≥ 0 or +Inf
//	        8·(N+1)   uint64   column starts: column j's entries are [start[j], start[j+1]),
//	                           start[0] = 0, start[N] = nnz, each column non-empty
//	        4·nnz     int32    row positions, strictly ascending within a column, the first
//	                           row of column j being j (the diagonal), all < N
//	        8·nnz     float64  values of L, finite, diagonal entries > 0
//	        4         uint32   CRC-32C (Castagnoli polynomial) of all preceding bytes
//
// with A = 72 + 8·s. The total size is 84 + 8·s + 8·N·d + 20·N + 12·nnz bytes. Position 0 is
// the finest point; L is lower triangular in positions, and Θ⁻¹ ≈ Π L Lᵀ Πᵀ with Π mapping
// position p to user index order[p]. The construction timings are not stored.

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"hash/crc32"
	"io"
	"math"
	"os"
	"path/filepath"

	"github.com/kchol/kchol/kernels"
)

// FormatVersion is the version of the binary factor file that WriteTo writes and Read reads.
// WriteTo's doc comment gives the layout.
const FormatVersion = 2

// fileMagic opens every factor file.
const fileMagic = "KCHOLFAC"

// Limits of the format, checked before anything is allocated.
const (
	headerSize       = 72
	maxFileDimension = 1 << 16
	maxFileEntries   = 1 << 56
)

// File codes of the kernel families, fixed by the format independently of kernels.Family.
var familyCodes = map[kernels.Family]uint8{
	kernels.Matern12: 1, kernels.Matern32: 2, kernels.Matern52: 3, kernels.Gaussian: 4,
}

func familyOfCode(c uint8) (kernels.Family, bool) {
	for f, code := range familyCodes {
		if code == c {
			return f, true
		}
	}
	return 0, false
}

var castagnoli = crc32.MakeTable(crc32.Castagnoli)

// chunkSize is the size of the encoding and decoding buffers; Read never allocates more than
// about twice the bytes it has actually read plus one chunk.
const chunkSize = 1 << 16

// fileSize returns the total size in bytes of a file with these dimensions. The arguments
// must satisfy the header limits, so that the result does not overflow.
func fileSize(n, d, nnz, scales uint64) uint64 {
	return headerSize + 8*scales + 8*n*d + 4*n + 8*n + 8*(n+1) + 4*nnz + 8*nnz + 4
}

// WriteTo writes f to w in the binary factor format, version FormatVersion, and returns the
// number of bytes written; it implements io.WriterTo. Read and ReadFile load the file back
// with every field bitwise equal (the construction timings are not stored).
//
// Only kernels.Stationary (or a non-nil *kernels.Stationary) is serialisable: WriteTo returns
// an error, having written nothing, for any other kernel. The kernel is stored normalised
// (Dimension = d). Cost O(N·d + nnz) time, O(1) memory beyond a 64 KiB buffer.
//
// The layout, little-endian throughout, floats IEEE 754 binary64, no padding:
//
//	offset  size      type     field
//	0       8         bytes    magic: the ASCII bytes "KCHOLFAC"
//	8       4         uint32   format version, 2 (version 1 files, with bytes 50–55 zero, are read too)
//	12      4         uint32   d, the dimension of the points, 1 ≤ d ≤ 65536
//	16      8         uint64   N, the number of points, 1 ≤ N < 2³¹−1
//	24      8         uint64   nnz, the number of stored entries of L, N ≤ nnz ≤ min(N(N+1)/2, 2⁵⁶)
//	32      8         float64  ρ of the radius pattern; 0 if not a radius pattern, else > 0 (+Inf: full)
//	40      4         uint32   m of the nearest-neighbour pattern; 0 if not one. ρ and m are not
//	                           both non-zero; both 0 means a pattern given by the caller
//	44      4         uint32   number of columns whose local block needed a jitter, ≤ N
//	48      1         uint8    kernel family: 1 Matérn 1/2, 2 Matérn 3/2, 3 Matérn 5/2, 4 Gaussian
//	49      1         uint8    length-scale kind: 0 one length scale shared by all dimensions
//	                           (s = 1), 1 one per dimension (s = d)
//	50      1         uint8    selection of the nearest-neighbour pattern: 0 the m nearest, 1 greedy
//	                           per column, 2 greedy per supernode (version 2; 0 in version 1)
//	51      1         -        reserved, zero
//	52      4         uint32   candidates c of the greedy selection; 0 unless greedy (version 2)
//	56      8         float64  variance σ² (0 means 1, as in kernels.Stationary)
//	64      8         float64  nugget, ≥ 0
//	72      8·s       float64  the length scale(s) of the kernel, finite and > 0
//	A       8·N·d     float64  points in position order, row-major: point p at A + 8·d·p
//	        4·N       uint32   order: the user index (input row) of position p, a permutation
//	        8·N       float64  maximin length scale ℓ of position p, ≥ 0 or +Inf
//	        8·(N+1)   uint64   column starts: column j's entries are [start[j], start[j+1]),
//	                           start[0] = 0, start[N] = nnz, each column non-empty
//	        4·nnz     int32    row positions, strictly ascending within a column, the first
//	                           row of column j being j (the diagonal), all < N
//	        8·nnz     float64  values of L, finite, diagonal entries > 0
//	        4         uint32   CRC-32C (Castagnoli polynomial) of all preceding bytes
//
// with A = 72 + 8·s. The total size is 84 + 8·s + 8·N·d + 20·N + 12·nnz bytes. Position 0 is
// the finest point; L is lower triangular in positions, and Θ⁻¹ ≈ Π L Lᵀ Πᵀ with Π mapping
// position p to user index order[p]. The construction timings are not stored.
func (f *Factor) WriteTo(w io.Writer) (int64, error) {
	k, err := stationaryOf(f.kernel)
	if err != nil {
		return 0, err
	}
	if f.neighbors > math.MaxUint32 {
		return 0, fmt.Errorf("cholesky: cannot write a factor with m = %d neighbours (at most %d)", f.neighbors, uint32(math.MaxUint32))
	}
	e := &encoder{w: w, buf: make([]byte, 0, chunkSize)}
	e.bytes([]byte(fileMagic))
	e.u32(FormatVersion)
	e.u32(uint32(f.d))
	e.u64(uint64(f.n))
	e.u64(uint64(f.colStart[f.n]))
	e.f64(f.rho)
	e.u32(uint32(f.neighbors))
	e.u32(uint32(f.jittered))
	e.bytes([]byte{familyCodes[k.Family]})
	scales := []float64{k.LengthScale}
	if k.LengthScales != nil {
		scales = k.LengthScales
		e.bytes([]byte{1})
	} else {
		e.bytes([]byte{0})
	}
	var greedy byte
	switch {
	case f.joint:
		greedy = 2
	case f.greedy:
		greedy = 1
	}
	e.bytes([]byte{greedy, 0})
	e.u32(uint32(f.candidates))
	e.f64(k.Variance)
	e.f64(k.Nugget)
	e.f64s(scales)
	e.f64s(f.points)
	for _, i := range f.order {
		e.u32(uint32(i))
	}
	e.f64s(f.lengthScale)
	for _, s := range f.colStart {
		e.u64(uint64(s))
	}
	for j := range f.n {
		rows, _ := f.col(j)
		for _, r := range rows {
			e.u32(uint32(r))
		}
	}
	for _, b := range f.values {
		e.f64s(b)
	}
	e.flush()
	if e.err != nil {
		return e.n, e.err
	}
	var sum [4]byte
	binary.LittleEndian.PutUint32(sum[:], e.crc)
	m, err := w.Write(sum[:])
	return e.n + int64(m), err
}

// stationaryOf returns the kernel as a validated kernels.Stationary, or an error.
func stationaryOf(k kernels.Kernel) (kernels.Stationary, error) {
	var s kernels.Stationary
	switch k := k.(type) {
	case kernels.Stationary:
		s = k
	case *kernels.Stationary:
		if k == nil {
			return s, errors.New("cholesky: cannot write a factor with a nil kernel")
		}
		s = *k
	default:
		return s, fmt.Errorf("cholesky: cannot write a factor of kernel type %T: only kernels.Stationary is serialisable", k)
	}
	if err := s.Validate(); err != nil {
		return s, fmt.Errorf("cholesky: cannot write the factor: %w", err)
	}
	return s, nil
}

// WriteFile writes f to path atomically: to a temporary file in the same directory, which is
// fsynced, then renamed over path. On any error the temporary file is removed and an existing
// file at path is left as it was. The file gets mode 0644. Errors and cost as WriteTo.
func (f *Factor) WriteFile(path string) (err error) {
	if _, err := stationaryOf(f.kernel); err != nil {
		return err
	}
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return fmt.Errorf("cholesky: write %s: %w", path, err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
			err = fmt.Errorf("cholesky: write %s: %w", path, err)
		}
	}()
	if _, err := f.WriteTo(tmp); err != nil {
		return err
	}
	if err := tmp.Chmod(0o644); err != nil {
		return err
	}
	if err := tmp.Sync(); err != nil {
		return err
	}
	if err := tmp.Close(); err != nil {
		return err
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		return err
	}
	// Make the rename durable; a failure here does not undo the write.
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
	return nil
}

// encoder appends little-endian values to a buffer, flushing it to w through the checksum.
type encoder struct {
	w   io.Writer
	buf []byte
	crc uint32
	n   int64
	err error
}

func (e *encoder) flush() {
	if e.err == nil && len(e.buf) > 0 {
		e.crc = crc32.Update(e.crc, castagnoli, e.buf)
		m, err := e.w.Write(e.buf)
		e.n += int64(m)
		e.err = err
	}
	e.buf = e.buf[:0]
}

func (e *encoder) reserve(k int) {
	if len(e.buf)+k > cap(e.buf) {
		e.flush()
	}
}

func (e *encoder) bytes(b []byte) {
	e.reserve(len(b))
	e.buf = append(e.buf, b...)
}

func (e *encoder) u32(v uint32) {
	e.reserve(4)
	e.buf = binary.LittleEndian.AppendUint32(e.buf, v)
}

func (e *encoder) u64(v uint64) {
	e.reserve(8)
	e.buf = binary.LittleEndian.AppendUint64(e.buf, v)
}

func (e *encoder) f64(v float64) { e.u64(math.Float64bits(v)) }

func (e *encoder) f64s(v []float64) {
	for _, x := range v {
		e.f64(x)
	}
}

// ReadFile reads and verifies the factor file at path (see Read). Besides Read's checks it
// requires the file size to equal the size its header declares. Errors name the path.
func ReadFile(path string) (*Factor, error) {
	file, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("cholesky: read factor: %w", err)
	}
	defer file.Close()
	info, err := file.Stat()
	if err != nil {
		return nil, fmt.Errorf("cholesky: read factor %s: %w", path, err)
	}
	f, err := read(file, info.Size())
	if err != nil {
		return nil, fmt.Errorf("cholesky: factor file %s: %w", path, err)
	}
	return f, nil
}

// Read parses and verifies a factor in the format described at FormatVersion, reading exactly
// the factor's bytes from r (nothing after the checksum). Every mismatch is an error, never a
// panic: bad magic, unsupported version, truncation, checksum mismatch, sizes inconsistent,
// rows not ascending or out of range, a column not starting with its diagonal, a non-positive
// diagonal, NaN or Inf (+Inf is allowed only as a maximin length scale and as ρ), an order
// that is not a permutation, invalid kernel parameters.
//
// Sizes in the header are bounded before anything is allocated, and the arrays are read in
// 64 KiB chunks, so a corrupted header cannot make Read allocate much more than the input
// holds. The timings of the returned factor are zero. Cost O(N·d + nnz).
func Read(r io.Reader) (*Factor, error) {
	f, err := read(r, -1)
	if err != nil {
		return nil, fmt.Errorf("cholesky: factor file: %w", err)
	}
	return f, nil
}

// read reads a factor from r; size is the number of bytes r holds, or -1 if unknown.
func read(r io.Reader, size int64) (*Factor, error) {
	dec := &decoder{r: r, buf: make([]byte, chunkSize)}
	if magic := dec.next(len(fileMagic), "magic"); dec.err != nil {
		return nil, dec.err
	} else if string(magic) != fileMagic {
		return nil, fmt.Errorf("bad magic %q, want %q: not a kchol factor file", magic, fileMagic)
	}
	h := make([]byte, headerSize)
	copy(h, fileMagic)
	copy(h[len(fileMagic):], dec.next(headerSize-len(fileMagic), "header"))
	if dec.err != nil {
		return nil, dec.err
	}
	le := binary.LittleEndian
	version := le.Uint32(h[8:])
	if version != 1 && version != FormatVersion {
		return nil, fmt.Errorf("unsupported format version %d (this program reads versions 1 and %d)", version, FormatVersion)
	}
	d64, n64, nnz64 := uint64(le.Uint32(h[12:])), le.Uint64(h[16:]), le.Uint64(h[24:])
	switch {
	case d64 < 1 || d64 > maxFileDimension:
		return nil, fmt.Errorf("dimension d = %d, want 1 ≤ d ≤ %d", d64, maxFileDimension)
	case n64 < 1 || n64 >= math.MaxInt32:
		return nil, fmt.Errorf("N = %d points, want 1 ≤ N < %d", n64, math.MaxInt32)
	case nnz64 < n64 || nnz64 > n64*(n64+1)/2 || nnz64 > maxFileEntries:
		return nil, fmt.Errorf("nnz = %d stored entries for N = %d, want N ≤ nnz ≤ N(N+1)/2", nnz64, n64)
	}
	rho := math.Float64frombits(le.Uint64(h[32:]))
	neighbors, jittered := le.Uint32(h[40:]), le.Uint32(h[44:])
	family, okFamily := familyOfCode(h[48])
	kind := h[49]
	switch {
	case math.IsNaN(rho) || rho < 0:
		return nil, fmt.Errorf("pattern ρ = %v, want 0 or > 0", rho)
	case rho != 0 && neighbors != 0:
		return nil, fmt.Errorf("both the radius pattern (ρ = %v) and the nearest-neighbour pattern (m = %d) are set", rho, neighbors)
	case uint64(jittered) > n64:
		return nil, fmt.Errorf("%d jittered columns for N = %d", jittered, n64)
	case !okFamily:
		return nil, fmt.Errorf("unknown kernel family code %d (want 1 to 4)", h[48])
	case kind > 1:
		return nil, fmt.Errorf("unknown length-scale kind %d (want 0 or 1)", kind)
	case version == 1 && !bytes.Equal(h[50:56], make([]byte, 6)):
		return nil, errors.New("reserved header bytes 50–55 are not zero")
	case h[50] > 2 || h[51] != 0:
		return nil, fmt.Errorf("unknown pattern selection %d or reserved byte 51 = %d not zero", h[50], h[51])
	case h[50] != 0 && neighbors == 0:
		return nil, errors.New("greedy selection without a number of neighbours m")
	case h[50] == 0 && le.Uint32(h[52:]) != 0:
		return nil, fmt.Errorf("%d greedy candidates for a pattern that is not greedy", le.Uint32(h[52:]))
	}
	scales := uint64(1)
	if kind == 1 {
		scales = d64
	}
	total := fileSize(n64, d64, nnz64, scales)
	if size >= 0 && uint64(size) != total {
		return nil, fmt.Errorf("file is %d bytes, its header declares %d (N = %d, d = %d, nnz = %d): truncated or trailing data", size, total, n64, d64, nnz64)
	}
	dec.total = total
	n, d, nnz := int(n64), int(d64), int(nnz64)
	k := kernels.Stationary{
		Family:    family,
		Dimension: d,
		Variance:  math.Float64frombits(le.Uint64(h[56:])),
		Nugget:    math.Float64frombits(le.Uint64(h[64:])),
	}
	ls := dec.f64s(int(scales), "kernel length scales")
	if kind == 1 {
		k.LengthScales = ls
	} else if len(ls) == 1 {
		k.LengthScale = ls[0]
	}
	f := &Factor{n: n, d: d, kernel: k, rho: rho, neighbors: int(neighbors), jittered: int(jittered),
		greedy: h[50] != 0, joint: h[50] == 2, candidates: int(le.Uint32(h[52:]))}
	f.points = dec.f64s(n*d, "points")
	order := dec.u32s(n, "order")
	f.lengthScale = dec.f64s(n, "length scales")
	starts := dec.u64s(n+1, "column starts")
	rows := dec.u32s(nnz, "rows")
	values := dec.f64s(nnz, "values")
	want := dec.crc
	sum := dec.next(4, "checksum")
	if dec.err != nil {
		return nil, dec.err
	}
	if got := le.Uint32(sum); got != want {
		return nil, fmt.Errorf("checksum mismatch: stored CRC-32C %08x, computed %08x (the file is corrupted)", got, want)
	}

	if err := k.Validate(); err != nil {
		return nil, fmt.Errorf("kernel parameters invalid: %w", err)
	}
	f.order = make([]int, n)
	f.position = make([]int, n)
	for i := range f.position {
		f.position[i] = -1
	}
	for p, u := range order {
		if uint64(u) >= n64 {
			return nil, fmt.Errorf("order[%d] = %d out of range [0, %d)", p, u, n)
		}
		if f.position[u] >= 0 {
			return nil, fmt.Errorf("order is not a permutation: user index %d at positions %d and %d", u, f.position[u], p)
		}
		f.order[p] = int(u)
		f.position[u] = p
	}
	for i, v := range f.points {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("point at position %d, coordinate %d is %v", i/d, i%d, v)
		}
	}
	for p, l := range f.lengthScale {
		if math.IsNaN(l) || l < 0 {
			return nil, fmt.Errorf("length scale of position %d is %v, want ≥ 0 or +Inf", p, l)
		}
	}
	f.colStart = make([]int64, n+1)
	for j, s := range starts {
		if s > nnz64 {
			return nil, fmt.Errorf("column start %d is %d, beyond nnz = %d", j, s, nnz)
		}
		f.colStart[j] = int64(s)
	}
	if f.colStart[0] != 0 || f.colStart[n] != int64(nnz) {
		return nil, fmt.Errorf("column starts run from %d to %d, want 0 to nnz = %d", f.colStart[0], f.colStart[n], nnz)
	}
	f.rows = make([]int32, nnz)
	for j := range n {
		lo, hi := f.colStart[j], f.colStart[j+1]
		if hi <= lo {
			return nil, fmt.Errorf("column %d is empty or its start decreases (%d to %d)", j, lo, hi)
		}
		if rows[lo] != uint32(j) {
			return nil, fmt.Errorf("column %d starts with row %d, not its diagonal", j, int32(rows[lo]))
		}
		for e := lo; e < hi; e++ {
			r := rows[e]
			if uint64(r) >= n64 {
				return nil, fmt.Errorf("column %d has row %d out of range [0, %d)", j, int32(r), n)
			}
			if e > lo && r <= rows[e-1] {
				return nil, fmt.Errorf("column %d: rows not strictly ascending (%d after %d)", j, r, rows[e-1])
			}
			f.rows[e] = int32(r)
			if v := values[e]; math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("column %d, row %d: value %v", j, r, v)
			}
		}
		if v := values[lo]; !(v > 0) {
			return nil, fmt.Errorf("column %d: diagonal %v, want > 0", j, v)
		}
	}
	// The file stores every column's rows in full: read back, each column is its own
	// supernode with its own row set.
	f.lambda = 1
	f.memberStart = make([]int64, n+1)
	f.members = make([]int32, n)
	for j := range n {
		f.memberStart[j+1] = int64(j + 1)
		f.members[j] = int32(j)
	}
	f.superRowStart = f.colStart
	f.rowStart = f.colStart[:n]
	f.values = newValueBlocks(f.colStart, values)
	return f, nil
}

// decoder reads fixed-size little-endian values in chunks, updating the checksum. After the
// first error every read returns zero values and the error stays in err.
type decoder struct {
	r     io.Reader
	buf   []byte
	crc   uint32
	n     int64  // bytes consumed
	total uint64 // declared file size, 0 before the header is known
	err   error
}

// next returns the next k ≤ chunkSize bytes (aliasing the buffer).
func (d *decoder) next(k int, what string) []byte {
	b := d.buf[:k]
	if d.err != nil {
		clear(b)
		return b
	}
	m, err := io.ReadFull(d.r, b)
	d.crc = crc32.Update(d.crc, castagnoli, b[:m])
	d.n += int64(m)
	if err != nil {
		clear(b[m:])
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			if d.total > 0 {
				err = fmt.Errorf("truncated: input ends after %d bytes, in the %s, but the header declares %d", d.n, what, d.total)
			} else {
				err = fmt.Errorf("truncated: input ends after %d bytes, in the %s", d.n, what)
			}
		}
		d.err = err
	}
	return b
}

// f64s reads count float64s, growing the result only as data arrives.
func (d *decoder) f64s(count int, what string) []float64 {
	out := make([]float64, 0, min(count, chunkSize/8))
	for len(out) < count && d.err == nil {
		k := min(count-len(out), chunkSize/8)
		b := d.next(8*k, what)
		for i := range k {
			out = append(out, math.Float64frombits(binary.LittleEndian.Uint64(b[8*i:])))
		}
	}
	return out
}

func (d *decoder) u64s(count int, what string) []uint64 {
	out := make([]uint64, 0, min(count, chunkSize/8))
	for len(out) < count && d.err == nil {
		k := min(count-len(out), chunkSize/8)
		b := d.next(8*k, what)
		for i := range k {
			out = append(out, binary.LittleEndian.Uint64(b[8*i:]))
		}
	}
	return out
}

func (d *decoder) u32s(count int, what string) []uint32 {
	out := make([]uint32, 0, min(count, chunkSize/4))
	for len(out) < count && d.err == nil {
		k := min(count-len(out), chunkSize/4)
		b := d.next(4*k, what)
		for i := range k {
			out = append(out, binary.LittleEndian.Uint32(b[4*i:]))
		}
	}
	return out
}
