package npy

import (
	"archive/zip"
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"regexp"
	"strconv"
	"strings"
)

// ErrFormat is wrapped by every error about a file that is not a .npy or
// .npz file of the supported kinds.
var ErrFormat = errors.New("npy: not a supported NumPy file")

// Array is one named array in row-major (C) order: float32 values in
// Data, or, for an array of integers, int64 values in Ints (Data nil).
type Array struct {
	Name  string
	Shape []int
	Data  []float32
	Ints  []int64
}

// values is the number of values a holds.
func (a Array) values() int {
	if a.Ints != nil {
		return len(a.Ints)
	}
	return len(a.Data)
}

func (a Array) numel() int {
	n := 1
	for _, s := range a.Shape {
		n *= s
	}
	return n
}

const magic = "\x93NUMPY"

// align is the multiple of bytes NumPy pads the magic string and header to
// (numpy.lib.format.ARRAY_ALIGN).
const align = 64

// WriteNPY writes a as one .npy file, format version 1.0: the magic string,
// the version, the header length (uint16, little-endian), the header (a
// Python dict literal padded with spaces and a newline) and the values as
// little-endian float32 ('<f4'), or int64 ('<i8') for an array of Ints.
// The number of values must be the product of a.Shape.
func WriteNPY(w io.Writer, a Array) error {
	if a.numel() != a.values() {
		panic(fmt.Sprintf("npy: WriteNPY: %d values for shape %v", a.values(), a.Shape))
	}
	descr := "<f4"
	if a.Ints != nil {
		descr = "<i8"
	}
	dims := make([]string, len(a.Shape))
	for i, s := range a.Shape {
		dims[i] = strconv.Itoa(s)
	}
	shape := "(" + strings.Join(dims, ", ")
	if len(dims) == 1 {
		shape += ","
	}
	shape += ")"
	header := "{'descr': '" + descr + "', 'fortran_order': False, 'shape': " + shape + ", }"
	pad := align - (len(magic)+4+len(header)+1)%align
	if pad == align {
		pad = 0
	}
	header += strings.Repeat(" ", pad) + "\n"
	if len(header) > math.MaxUint16 {
		return fmt.Errorf("npy: %s: shape %v too long for a version 1.0 header", a.Name, a.Shape)
	}
	var pre [len(magic) + 4]byte
	copy(pre[:], magic)
	pre[6], pre[7] = 1, 0
	binary.LittleEndian.PutUint16(pre[8:], uint16(len(header)))
	if _, err := w.Write(pre[:]); err != nil {
		return err
	}
	if _, err := io.WriteString(w, header); err != nil {
		return err
	}
	buf := make([]byte, 1<<16)
	if a.Ints != nil {
		return writeInts(w, buf, a.Ints)
	}
	for x := a.Data; len(x) > 0; {
		n := min(len(x), len(buf)/4)
		for i, v := range x[:n] {
			binary.LittleEndian.PutUint32(buf[4*i:], math.Float32bits(v))
		}
		if _, err := w.Write(buf[:4*n]); err != nil {
			return err
		}
		x = x[n:]
	}
	return nil
}

func writeInts(w io.Writer, buf []byte, x []int64) error {
	for len(x) > 0 {
		n := min(len(x), len(buf)/8)
		for i, v := range x[:n] {
			binary.LittleEndian.PutUint64(buf[8*i:], uint64(v))
		}
		if _, err := w.Write(buf[:8*n]); err != nil {
			return err
		}
		x = x[n:]
	}
	return nil
}

// WriteNPZ writes the arrays as an .npz file, the format of numpy.savez: a
// zip archive holding NAME.npy for each array, uncompressed. Names must be
// distinct and non-empty.
func WriteNPZ(w io.Writer, arrays []Array) error {
	zw := zip.NewWriter(w)
	seen := map[string]bool{}
	for _, a := range arrays {
		if a.Name == "" || seen[a.Name] {
			panic(fmt.Sprintf("npy: WriteNPZ: empty or repeated array name %q", a.Name))
		}
		seen[a.Name] = true
		f, err := zw.CreateHeader(&zip.FileHeader{Name: a.Name + ".npy", Method: zip.Store})
		if err != nil {
			return err
		}
		if err := WriteNPY(f, a); err != nil {
			return err
		}
	}
	return zw.Close()
}

// ReadNPZ reads the arrays of an .npz file (as numpy.savez writes it,
// compressed or not) of size bytes, in archive order. Only C-order arrays of
// float32 or float64 (converted to float32, rounded to nearest), or of
// int64 (into Ints), little-endian, are supported; name is used in
// messages.
func ReadNPZ(r io.ReaderAt, size int64, name string) ([]Array, error) {
	zr, err := zip.NewReader(r, size)
	if err != nil {
		return nil, fmt.Errorf("npy: %s: not a zip archive (%v): %w", name, err, ErrFormat)
	}
	var out []Array
	for _, f := range zr.File {
		if !strings.HasSuffix(f.Name, ".npy") {
			return nil, fmt.Errorf("npy: %s: entry %s is not a .npy file: %w", name, f.Name, ErrFormat)
		}
		rc, err := f.Open()
		if err != nil {
			return nil, fmt.Errorf("npy: %s: %s: %v: %w", name, f.Name, err, ErrFormat)
		}
		a, err := ReadNPY(io.LimitReader(rc, int64(min(f.UncompressedSize64, math.MaxInt64))), int64(min(f.UncompressedSize64, math.MaxInt64)))
		rc.Close()
		if err != nil {
			return nil, fmt.Errorf("npy: %s: %s: %w", name, f.Name, err)
		}
		a.Name = strings.TrimSuffix(f.Name, ".npy")
		out = append(out, a)
	}
	return out, nil
}

var headerRE = regexp.MustCompile(`^\{\s*'descr':\s*'([<>|=]?[a-z]\d+)',\s*'fortran_order':\s*(True|False),\s*'shape':\s*\(([\d,\s]*)\),?\s*\}\s*$`)

// readHeader reads a .npy file's magic string, version and header
// dictionary (at most size bytes) and returns the dictionary's text.
func readHeader(r io.Reader, size int64) ([]byte, error) {
	var pre [len(magic) + 2]byte
	if _, err := io.ReadFull(r, pre[:]); err != nil || string(pre[:len(magic)]) != magic {
		return nil, fmt.Errorf("no .npy magic string: %w", ErrFormat)
	}
	var hlen int64
	switch pre[6] {
	case 1:
		var b [2]byte
		if _, err := io.ReadFull(r, b[:]); err != nil {
			return nil, fmt.Errorf("truncated header: %w", ErrFormat)
		}
		hlen = int64(binary.LittleEndian.Uint16(b[:]))
	case 2, 3:
		var b [4]byte
		if _, err := io.ReadFull(r, b[:]); err != nil {
			return nil, fmt.Errorf("truncated header: %w", ErrFormat)
		}
		hlen = int64(binary.LittleEndian.Uint32(b[:]))
	default:
		return nil, fmt.Errorf("format version %d.%d: %w", pre[6], pre[7], ErrFormat)
	}
	if hlen > size || hlen > 1<<20 {
		return nil, fmt.Errorf("header of %d bytes in a file of %d: %w", hlen, size, ErrFormat)
	}
	h := make([]byte, hlen)
	if _, err := io.ReadFull(r, h); err != nil {
		return nil, fmt.Errorf("truncated header: %w", ErrFormat)
	}
	return h, nil
}

// ReadNPY reads one .npy file of at most size bytes (see ReadNPZ for the
// kinds supported).
func ReadNPY(r io.Reader, size int64) (Array, error) {
	h, err := readHeader(r, size)
	if err != nil {
		return Array{}, err
	}
	m := headerRE.FindSubmatch(h)
	if m == nil {
		return Array{}, fmt.Errorf("header %q not understood: %w", bytes.TrimSpace(h), ErrFormat)
	}
	descr, fortran := string(m[1]), string(m[2]) == "True"
	var a Array
	n := int64(1)
	for _, f := range strings.Split(string(m[3]), ",") {
		if f = strings.TrimSpace(f); f == "" {
			continue
		}
		d, err := strconv.Atoi(f)
		if err != nil || d < 0 || (d > 0 && n > size/int64(d)) {
			return Array{}, fmt.Errorf("shape (%s) does not fit a file of %d bytes: %w", m[3], size, ErrFormat)
		}
		a.Shape = append(a.Shape, d)
		n *= int64(d)
	}
	if fortran && len(a.Shape) > 1 {
		return Array{}, fmt.Errorf("a Fortran-order array: save it with numpy.ascontiguousarray: %w", ErrFormat)
	}
	var width int64
	switch descr {
	case "<f4":
		width = 4
	case "<f8", "<i8":
		width = 8
	default:
		return Array{}, fmt.Errorf("element type %s: only little-endian float32, float64 and int64 (<f4, <f8, <i8) are read: %w", descr, ErrFormat)
	}
	if n*width > size {
		return Array{}, fmt.Errorf("shape %v needs %d bytes, the file has at most %d: %w", a.Shape, n*width, size, ErrFormat)
	}
	raw := make([]byte, n*width)
	if _, err := io.ReadFull(r, raw); err != nil {
		return Array{}, fmt.Errorf("truncated data (%v): %w", err, ErrFormat)
	}
	if descr == "<i8" {
		a.Ints = make([]int64, n)
		for i := range a.Ints {
			a.Ints[i] = int64(binary.LittleEndian.Uint64(raw[8*i:]))
		}
		return a, nil
	}
	a.Data = make([]float32, n)
	for i := range a.Data {
		if width == 4 {
			a.Data[i] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*i:]))
		} else {
			a.Data[i] = float32(math.Float64frombits(binary.LittleEndian.Uint64(raw[8*i:])))
		}
	}
	return a, nil
}
