package cnn

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"math"
	"math/rand/v2"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"testing"
)

// wideSavedModel is savedModel's model (masked filter, tokenizer, info)
// with the wide path on and a non-zero table.
func wideSavedModel(t testing.TB) *Model {
	m, _ := savedModel(t)
	return withWide(m, 4, 1.5)
}

// A model with the wide path saves as format version 4 and loads back
// equal, table included; every logit of Forward is bit for bit the same
// before and after, so the file changes no prediction. With a linear
// baseline and with a character layer beside the wide path too.
func TestWideSaveLoadRoundTrip(t *testing.T) {
	withBase := wideSavedModel(t)
	withBase.Baseline = tinyBaseline(t, withBase.Labels)
	chars := withWide(randCharModel(7, 40, 8, []int{2, 3}, 5, 3, CharConfig{Filters: 4, Width: 3, Dim: 5, MaxChars: 6}), 7, 2)
	for name, m := range map[string]*Model{"plain": wideSavedModel(t), "baseline": withBase, "chars": chars} {
		path := filepath.Join(t.TempDir(), "wide.tt")
		if err := m.Save(path); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		got, err := Load(path)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var buf bytes.Buffer
		if err := m.encode(&buf); err != nil {
			t.Fatal(err)
		}
		if v := binary.LittleEndian.Uint32(buf.Bytes()[8:]); v != 4 {
			t.Errorf("%s: a model with the wide path is written as version %d, want 4", name, v)
		}
		got.Info.Version = ""
		if !got.Config.Wide || !reflect.DeepEqual(got, m) {
			t.Fatalf("%s: the loaded model differs from the saved one", name)
		}
		for _, ids := range randTexts(rand.New(rand.NewPCG(2, 3)), 30, 25, m.Config.VocabSize) {
			a, b := m.Forward(ids).Logits, got.Forward(ids).Logits
			for c := range a {
				if math.Float32bits(a[c]) != math.Float32bits(b[c]) {
					t.Fatalf("%s: text %v: logits %v after loading, %v before", name, ids, b, a)
				}
			}
		}
	}
}

// Models without the wide path are written exactly as before: version 2
// without a character layer, no "wide" member in the header and no extra
// weights, so older programs read them.
func TestNoWideFileUnchanged(t *testing.T) {
	m, data := savedModel(t)
	if v := binary.LittleEndian.Uint32(data[8:]); v != 2 {
		t.Errorf("a model without the wide path is written as version %d, want 2", v)
	}
	f, err := splitFile(data)
	if err != nil {
		t.Fatal(err)
	}
	if bytes.Contains(f.header, []byte(`"wide"`)) {
		t.Error(`the header of a model without the wide path has a "wide" member`)
	}
	if want := numWeights(m.Config, 0); f.nw != uint64(want) || m.Wide != nil {
		t.Errorf("%d weights stored, want %d", f.nw, want)
	}
}

// rebuildFile writes a model file from its parts with a fresh checksum:
// for damaged files whose header or weights were edited.
func rebuildFile(version uint32, header, weights, baseline []byte) []byte {
	var b []byte
	b = append(b, fileMagic...)
	b = binary.LittleEndian.AppendUint32(b, version)
	b = binary.LittleEndian.AppendUint64(b, uint64(len(header)))
	b = append(b, header...)
	b = binary.LittleEndian.AppendUint64(b, uint64(len(weights)/4))
	b = append(b, weights...)
	b = binary.LittleEndian.AppendUint64(b, uint64(len(baseline)/8))
	b = append(b, baseline...)
	return reseal(append(b, 0, 0, 0, 0))
}

// A file whose header announces the wide path but whose weights lack the
// table, hold one of another size, come from a version without the path,
// or have a non-zero PAD row is refused, naming the problem.
func TestWideFileDamaged(t *testing.T) {
	m := wideSavedModel(t)
	f := encodedParts(t, m)
	table := 4 * len(m.Wide)
	noTable := f.weights[:len(f.weights)-table]
	padRow := bytes.Clone(f.weights)
	binary.LittleEndian.PutUint32(padRow[len(f.weights)-table:], math.Float32bits(0.5))
	// A header edited to drop the path: the table's weights are left over.
	var h map[string]json.RawMessage
	if err := json.Unmarshal(f.header, &h); err != nil {
		t.Fatal(err)
	}
	h["config"] = json.RawMessage(bytes.Replace(h["config"], []byte(`"wide":true`), []byte(`"wide":false`), 1))
	noWideHeader, err := json.Marshal(h)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name string
		file []byte
		want string
	}{
		{"no table", rebuildFile(4, f.header, noTable, f.baseline), "lacks its table (200 words × 3 classes)"},
		{"one value short", rebuildFile(4, f.header, f.weights[:len(f.weights)-4], f.baseline), "wide word-weight table has 599 values but the configuration needs 200 words × 3 classes"},
		{"one value more", rebuildFile(4, f.header, append(bytes.Clone(f.weights), 0, 0, 0, 0), f.baseline), "wide word-weight table has 601 values"},
		{"version 3", rebuildFile(3, f.header, f.weights, f.baseline), "wide word-weight path in a version 3 file"},
		{"version 2 without table", rebuildFile(2, f.header, noTable, f.baseline), "wide word-weight path in a version 2 file"},
		{"PAD row", rebuildFile(4, f.header, padRow, f.baseline), "PAD row of the wide word-weight table is not zero"},
		{"header without the path", rebuildFile(4, noWideHeader, f.weights, f.baseline), "the configuration needs"},
	} {
		for _, withBaseline := range []bool{true, false} {
			_, err := decode(c.file, withBaseline)
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
			}
		}
	}
	// The untouched parts rebuilt make a file that loads: the edits above
	// are what the errors are about.
	if _, err := decode(rebuildFile(4, f.header, f.weights, f.baseline), true); err != nil {
		t.Fatalf("the file rebuilt unchanged: %v", err)
	}
}

// The fast header scan reads the "wide" member of the configuration as
// encoding/json does (FuzzDecodeHeaderFast has this header as a seed).
func TestDecodeHeaderFastWide(t *testing.T) {
	m := wideSavedModel(t)
	f := encodedParts(t, m)
	var got headerIn
	if !decodeHeaderFast(f.header, &got) {
		t.Fatal("the fast decoding gave up on a wide model's header")
	}
	want, err := decodeHeaderReference(f.header)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Config.Wide || !reflect.DeepEqual(got, want) {
		t.Errorf("fast decoding %+v, encoding/json %+v", got.Config, want.Config)
	}
	if !slices.Equal(got.Vocab, m.Vocab) {
		t.Error("the vocabulary read differs from the one written")
	}
}

// encodedParts encodes m as a model file in memory and splits it into its
// parts.
func encodedParts(t *testing.T, m *Model) fileParts {
	t.Helper()
	f, err := splitFile(encodedFile(t, m))
	if err != nil {
		t.Fatal(err)
	}
	return f
}

// encodedFile encodes m as a model file in memory.
func encodedFile(t *testing.T, m *Model) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}
