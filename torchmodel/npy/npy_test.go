package npy

import (
	"bytes"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"

	"telltale/internal/testref"
)

// NumPy itself (Debian's python3-numpy) reads what WriteNPZ writes with
// allow_pickle=False, with the same names, shapes and values; and ReadNPZ
// reads what numpy.savez and numpy.savez_compressed write (float32 and
// float64), with the values NumPy holds.
func TestNumPyRoundTrip(t *testing.T) {
	testref.RequirePython(t, "numpy")
	dir := t.TempDir()
	arrays := []Array{
		{Name: "embedding.weight", Shape: []int{3, 2}, Data: []float32{0, 0, 1.5, -2, 3.25, 1e-7}},
		{Name: "convs.0.bias", Shape: []int{4}, Data: []float32{1, 2, 3, 4}},
		{Name: "scalar", Shape: nil, Data: []float32{7}},
		{Name: "empty", Shape: []int{0, 5}, Data: []float32{}},
		{Name: "cube", Shape: []int{2, 1, 3}, Data: []float32{1, 2, 3, 4, 5, 6}},
	}
	var buf bytes.Buffer
	if err := WriteNPZ(&buf, arrays); err != nil {
		t.Fatal(err)
	}
	ours := filepath.Join(dir, "ours.npz")
	if err := os.WriteFile(ours, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	// Python prints each array as name|shape|values, then writes two
	// archives of its own.
	script := `
import sys, numpy as np
d = np.load(sys.argv[1], allow_pickle=False)
for k in d.files:
    a = d[k]
    assert a.dtype == np.float32 and a.flags["C_CONTIGUOUS"], (k, a.dtype)
    print(k + "|" + ",".join(map(str, a.shape)) + "|" + ",".join(repr(float(x)) for x in a.ravel()))
x = (np.arange(12, dtype=np.float64).reshape(3, 4) / 7)
np.savez(sys.argv[2], x64=x, x32=x.astype(np.float32))
np.savez_compressed(sys.argv[3], x64=x, x32=x.astype(np.float32))
`
	theirs, packed := filepath.Join(dir, "theirs.npz"), filepath.Join(dir, "packed.npz")
	out, err := exec.Command(testref.Python, "-c", script, ours, theirs, packed).CombinedOutput()
	if err != nil {
		t.Fatalf("numpy: %v\n%s", err, out)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != len(arrays) {
		t.Fatalf("numpy read %d arrays:\n%s", len(lines), out)
	}
	for i, a := range arrays {
		f := strings.Split(lines[i], "|")
		var shape []int
		var vals []float32
		for _, d := range splitNonEmpty(f[1]) {
			n, _ := strconv.Atoi(d)
			shape = append(shape, n)
		}
		for _, v := range splitNonEmpty(f[2]) {
			x, _ := strconv.ParseFloat(v, 64)
			vals = append(vals, float32(x))
		}
		if f[0] != a.Name || !slices.Equal(shape, a.Shape) || !slices.Equal(vals, a.Data) {
			t.Errorf("numpy read %q, want %s %v %v", lines[i], a.Name, a.Shape, a.Data)
		}
	}
	for _, p := range []string{theirs, packed} {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		st, _ := f.Stat()
		got, err := ReadNPZ(f, st.Size(), p)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		want := make([]float32, 12)
		for i := range want {
			want[i] = float32(float64(i) / 7)
		}
		if len(got) != 2 || got[0].Name != "x64" || got[1].Name != "x32" {
			t.Fatalf("%s: %v", p, got)
		}
		for _, a := range got {
			if !slices.Equal(a.Shape, []int{3, 4}) || !slices.Equal(a.Data, want) {
				t.Errorf("%s %s: %v %v, want %v", p, a.Name, a.Shape, a.Data, want)
			}
		}
	}
}

func splitNonEmpty(s string) []string {
	if s == "" {
		return nil
	}
	return strings.Split(s, ",")
}

// Our own files read back, and damaged ones are refused with ErrFormat.
func TestReadBack(t *testing.T) {
	a := Array{Name: "w", Shape: []int{2, 2}, Data: []float32{1, -2, 3, 4}}
	var buf bytes.Buffer
	if err := WriteNPZ(&buf, []Array{a}); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	got, err := ReadNPZ(bytes.NewReader(b), int64(len(b)), "x.npz")
	if err != nil || len(got) != 1 || !slices.Equal(got[0].Data, a.Data) || !slices.Equal(got[0].Shape, a.Shape) {
		t.Fatalf("%v %v", got, err)
	}
	var one bytes.Buffer
	WriteNPY(&one, a)
	if (one.Len()-16)%64 != 0 { // 16 bytes of values follow the padded header
		t.Errorf("header plus magic is %d bytes, not a multiple of 64", one.Len()-16)
	}
	for name, bad := range map[string][]byte{
		"truncated": one.Bytes()[:one.Len()-3],
		"magic":     append([]byte("XNUMPY"), one.Bytes()[6:]...),
		"dtype":     bytes.Replace(one.Bytes(), []byte("<f4"), []byte("<i4"), 1),
	} {
		if _, err := ReadNPY(bytes.NewReader(bad), int64(len(bad))); !errors.Is(err, ErrFormat) {
			t.Errorf("%s: %v, want ErrFormat", name, err)
		}
	}
}

// int64 arrays (integer buffers of a module) go both ways with NumPy
// (Debian's python3-numpy): NumPy reads ours as int64 with the same values,
// including ones beyond float32's exact integers, and ReadNPZ reads
// numpy.savez's int64 array into Ints.
func TestNumPyInt64(t *testing.T) {
	testref.RequirePython(t, "numpy")
	dir := t.TempDir()
	a := Array{Name: "ids", Shape: []int{2, 3}, Ints: []int64{0, 1, -2, 1 << 40, 16777217, 7}}
	var buf bytes.Buffer
	if err := WriteNPZ(&buf, []Array{a}); err != nil {
		t.Fatal(err)
	}
	ours, theirs := filepath.Join(dir, "ours.npz"), filepath.Join(dir, "theirs.npz")
	if err := os.WriteFile(ours, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	script := `
import sys, numpy as np
a = np.load(sys.argv[1], allow_pickle=False)["ids"]
assert a.dtype == np.int64 and a.shape == (2, 3), (a.dtype, a.shape)
print(",".join(str(int(x)) for x in a.ravel()))
np.savez(sys.argv[2], ids=np.array([[3, -1], [1 << 50, 0]], dtype=np.int64))
`
	out, err := exec.Command(testref.Python, "-c", script, ours, theirs).CombinedOutput()
	if err != nil {
		t.Fatalf("numpy: %v\n%s", err, out)
	}
	if got := strings.TrimSpace(string(out)); got != "0,1,-2,1099511627776,16777217,7" {
		t.Errorf("numpy read %s", got)
	}
	f, err := os.Open(theirs)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	st, _ := f.Stat()
	got, err := ReadNPZ(f, st.Size(), theirs)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 1 || got[0].Data != nil || !slices.Equal(got[0].Shape, []int{2, 2}) || !slices.Equal(got[0].Ints, []int64{3, -1, 1 << 50, 0}) {
		t.Errorf("read %+v", got)
	}
}
