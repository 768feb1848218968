package torchmodel

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"telltale/torchmodel/npy"
)

// writeTorchSave writes arrays as torch.save writes a state_dict of float32
// tensors (zip format; pickle protocol 2 as in the statedict tests'
// files), for benchmarks that must not depend on Python.
func writeTorchSave(t testing.TB, path string, arrays []npy.Array) {
	var p bytes.Buffer
	str := func(s string) {
		p.WriteByte('X')
		binary.Write(&p, binary.LittleEndian, uint32(len(s)))
		p.WriteString(s)
	}
	num := func(n int) {
		p.WriteByte('J')
		binary.Write(&p, binary.LittleEndian, int32(n))
	}
	p.WriteString("\x80\x02ccollections\nOrderedDict\n)R(")
	for i, a := range arrays {
		str(a.Name)
		p.WriteString("ctorch._utils\n_rebuild_tensor_v2\n((")
		str("storage")
		p.WriteString("ctorch\nFloatStorage\n")
		str(strconv.Itoa(i))
		str("cpu")
		num(len(a.Data))
		p.WriteString("tQ")
		num(0)
		p.WriteString("(")
		for _, s := range a.Shape {
			num(s)
		}
		p.WriteString("t(")
		stride := 1
		strides := make([]int, len(a.Shape))
		for k := len(a.Shape) - 1; k >= 0; k-- {
			strides[k] = stride
			stride *= a.Shape[k]
		}
		for _, s := range strides {
			num(s)
		}
		p.WriteString("t\x89ccollections\nOrderedDict\n)RtR")
	}
	p.WriteString("u.")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	zw := zip.NewWriter(f)
	add := func(name string, b []byte) {
		w, err := zw.CreateHeader(&zip.FileHeader{Name: "archive/" + name, Method: zip.Store})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := w.Write(b); err != nil {
			t.Fatal(err)
		}
	}
	add("data.pkl", p.Bytes())
	for i, a := range arrays {
		b := make([]byte, 4*len(a.Data))
		for j, v := range a.Data {
			binary.LittleEndian.PutUint32(b[4*j:], math.Float32bits(v))
		}
		add("data/"+strconv.Itoa(i), b)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := f.Close(); err != nil {
		t.Fatal(err)
	}
}

// BenchmarkImport imports a Kim CNN of a 100,000-word vocabulary with
// 300-dimensional embeddings (widths 3, 4, 5 × 100 filters, 2 classes): the
// torch.save file (about 120 MB), its SHA-256, the vocabulary file and the
// conversion to telltale's layout; then also the model file written.
func BenchmarkImport(b *testing.B) {
	const words, dim = 100_000, 300
	dir := b.TempDir()
	arrays := []npy.Array{{Name: "embedding.weight", Shape: []int{words, dim}, Data: make([]float32, words*dim)}}
	for i := dim; i < len(arrays[0].Data); i++ {
		arrays[0].Data[i] = float32(i%97) / 97
	}
	for i, k := range []int{3, 4, 5} {
		arrays = append(arrays,
			npy.Array{Name: fmt.Sprintf("convs.%d.weight", i), Shape: []int{100, dim, k}, Data: make([]float32, 100*dim*k)},
			npy.Array{Name: fmt.Sprintf("convs.%d.bias", i), Shape: []int{100}, Data: make([]float32, 100)})
	}
	arrays = append(arrays, npy.Array{Name: "fc.weight", Shape: []int{2, 300}, Data: make([]float32, 600)},
		npy.Array{Name: "fc.bias", Shape: []int{2}, Data: make([]float32, 2)})
	sd := filepath.Join(dir, "model.pt")
	writeTorchSave(b, sd, arrays)
	vocab := make([]string, words)
	for i := range vocab {
		vocab[i] = "w" + strconv.Itoa(i)
	}
	vocab[0], vocab[1] = "<pad>", "<unk>"
	vf := filepath.Join(dir, "vocab.txt")
	if err := os.WriteFile(vf, []byte(strings.Join(vocab, "\n")), 0o644); err != nil {
		b.Fatal(err)
	}
	o := Options{StateDict: sd, Vocab: vf, PadID: -1, UnkID: -1, Labels: []string{"a", "b"}}
	out := filepath.Join(dir, "model.tt")
	for _, save := range []bool{false, true} {
		b.Run(map[bool]string{false: "import", true: "import+save"}[save], func(b *testing.B) {
			for b.Loop() {
				res, err := Import(context.Background(), o)
				if err != nil {
					b.Fatal(err)
				}
				if res.Model.Config.VocabSize != words || res.Model.Emb[dim+1] != arrays[0].Data[dim+1] {
					b.Fatal("wrong model")
				}
				if save {
					if err := res.Model.Save(out); err != nil {
						b.Fatal(err)
					}
				}
			}
		})
	}
}
