package cnn

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"telltale/corpus"
	"telltale/internal/version"
)

func savedModel(t testing.TB) (*Model, []byte) {
	m := randModel(4, 200, 16, []int{3, 4, 5}, 6, 3)
	m.Masked = make([]bool, m.Config.NumFilters())
	m.Masked[5] = true
	m.Tokenizer = corpus.TokenizerConfig{Lower: true, MinCount: 2}
	m.Info = Info{Created: "2025-01-01T00:00:00Z", BestEpoch: 3, Notes: map[string]string{"data": "demo.csv"},
		Dev: &Metrics{Accuracy: 0.9, MacroF1: 0.8},
		Splits: &SplitRecord{Data: "demo.csv", DataAbs: "/data/demo.csv", DevFrac: 0.1, TestFrac: 0.1, Seed: 1,
			Examples: 10, Fingerprint: "00000000000000ff", TestFile: "/data/test.csv", TestFingerprint: "00000000000000ee", Train: 8, Dev: 1, Test: 1}}
	var buf bytes.Buffer
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	return m, buf.Bytes()
}

func TestSaveLoadRoundTrip(t *testing.T) {
	m, _ := savedModel(t)
	path := filepath.Join(t.TempDir(), "m.ttm")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	got, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	// The file records the version that wrote it; the rest comes back as saved.
	if got.Info.Version != version.String() {
		t.Errorf("the file records version %q, want %q", got.Info.Version, version.String())
	}
	got.Info.Version = ""
	if !reflect.DeepEqual(got, m) {
		t.Fatalf("loaded model differs from the saved one")
	}
	ents, _ := os.ReadDir(filepath.Dir(path))
	if len(ents) != 1 {
		t.Errorf("save left %d files in its directory, want only the model", len(ents))
	}
}

func TestLoadTruncated(t *testing.T) {
	_, data := savedModel(t)
	for n := 0; n < len(data); n += 1024 {
		if _, err := decode(data[:n], true); err == nil {
			t.Fatalf("truncated at %d of %d bytes: no error", n, len(data))
		} else if n >= 20 && !strings.Contains(err.Error(), "truncated") && !strings.Contains(err.Error(), "incomplete") {
			t.Errorf("truncated at %d: error %q does not say so", n, err)
		}
	}
	if _, err := decode(data[:len(data)-1], true); err == nil {
		t.Fatal("last byte missing: no error")
	}
}

func TestLoadFlippedByte(t *testing.T) {
	_, data := savedModel(t)
	for _, at := range []int{30, len(data) / 2, len(data) - 10, len(data) - 2} {
		bad := bytes.Clone(data)
		bad[at] ^= 0x10
		_, err := decode(bad, true)
		if err == nil || !strings.Contains(err.Error(), "corrupt") {
			t.Errorf("byte %d flipped: error %v, want a corruption error", at, err)
		}
	}
}

// reseal recomputes the checksum after an edit.
func reseal(b []byte) []byte {
	binary.LittleEndian.PutUint32(b[len(b)-4:], crc32.Checksum(b[:len(b)-4], crcTable))
	return b
}

func TestLoadNewerVersion(t *testing.T) {
	_, data := savedModel(t)
	bad := bytes.Clone(data)
	binary.LittleEndian.PutUint32(bad[8:], FormatVersion+1)
	_, err := decode(reseal(bad), true)
	if err == nil || !strings.Contains(err.Error(), "newer") {
		t.Fatalf("newer version: error %v", err)
	}
}

func TestLoadVocabMismatch(t *testing.T) {
	m, _ := savedModel(t)
	m.Vocab = append(m.Vocab, "extra") // one word more than the weights hold
	var buf bytes.Buffer
	if err := m.encode(&buf); err != nil {
		t.Fatal(err)
	}
	_, err := decode(buf.Bytes(), true)
	if err == nil || !strings.Contains(err.Error(), "vocabulary") {
		t.Fatalf("vocabulary/weights mismatch: error %v", err)
	}
	if _, err := decode([]byte("PK\x03\x04 not a model"), true); err == nil || !strings.Contains(err.Error(), "not a telltale model") {
		t.Fatalf("foreign file: error %v", err)
	}
}

func FuzzLoad(f *testing.F) {
	m, data := savedModel(f)
	f.Add(data)
	f.Add(data[:100])
	m.Baseline = tinyBaseline(f, m.Labels)
	var withBaseline bytes.Buffer
	if err := m.encode(&withBaseline); err != nil {
		f.Fatal(err)
	}
	f.Add(withBaseline.Bytes())
	var wide bytes.Buffer
	if err := withWide(m, 1, 1).encode(&wide); err != nil {
		f.Fatal(err)
	}
	f.Add(wide.Bytes())
	f.Add([]byte(fileMagic))
	f.Fuzz(func(t *testing.T, b []byte) {
		for _, withBaseline := range []bool{true, false} {
			m, err := decode(b, withBaseline)
			if err == nil {
				if err := m.checkShapes(); err != nil {
					t.Fatalf("decode (baseline %v) accepted a model with bad shapes: %v", withBaseline, err)
				}
			}
		}
	})
}

// LoadWithoutBaseline gives the CNN of the file, weights and all, without
// its baseline; Load of the same file keeps the baseline.
func TestLoadWithoutBaseline(t *testing.T) {
	m, _ := savedModel(t)
	m.Baseline = tinyBaseline(t, m.Labels)
	path := filepath.Join(t.TempDir(), "m.tt")
	if err := m.Save(path); err != nil {
		t.Fatal(err)
	}
	full, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	cnnOnly, err := LoadWithoutBaseline(path)
	if err != nil {
		t.Fatal(err)
	}
	if full.Baseline == nil || cnnOnly.Baseline != nil {
		t.Fatalf("Load's baseline %v, LoadWithoutBaseline's %v: want one and none", full.Baseline != nil, cnnOnly.Baseline != nil)
	}
	full.Baseline = nil
	if !reflect.DeepEqual(full, cnnOnly) {
		t.Errorf("the CNN read without the baseline differs from the one read with it")
	}
	// A file whose header lost its baseline but kept the weights is still
	// refused.
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	bad := bytes.Replace(data, []byte(`"baseline":`), []byte(`"baselinX":`), 1)
	if _, err := decode(reseal(bad), false); err == nil || !strings.Contains(err.Error(), "no baseline in the header") {
		t.Errorf("a header without its baseline: %v", err)
	}
}

// TestSmallVocabularyRoundTrip: a model whose embedding table is small next
// to its filters (a tiny vocabulary with the default architecture) saves and
// loads.
func TestSmallVocabularyRoundTrip(t *testing.T) {
	words := []string{"<pad>", "<unk>", "ferry", "late"}
	m, err := New(Config{VocabSize: len(words), Dim: 128, Widths: []int{3, 4, 5}, Filters: 100, Classes: 2}, words, []string{"a", "b"}, 1)
	if err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(t.TempDir(), "small.tt")
	if err := m.Save(p); err != nil {
		t.Fatal(err)
	}
	got, err := Load(p)
	if err != nil {
		t.Fatalf("loading a small-vocabulary model: %v", err)
	}
	if got.Config.VocabSize != 4 || len(got.Convs) != 3 || got.Convs[2].W[7] != m.Convs[2].W[7] {
		t.Fatal("round trip changed the model")
	}
}

// Loading copies the weights' bytes in one move on a little-endian
// machine; the result must equal decoding every value from its four
// little-endian bytes, NaN payloads and negative zeros included.
func TestReadWeightsCopyMatchesDecoding(t *testing.T) {
	m, _ := savedModel(t)
	m.Emb[m.Config.Dim+1] = math.Float32frombits(0x7fc00123) // a NaN with a payload
	m.Emb[m.Config.Dim+2] = float32(math.Copysign(0, -1))
	var w []byte
	for _, x := range [][]float32{m.Emb, m.Convs[0].W, m.Convs[0].B, m.Convs[1].W, m.Convs[1].B, m.Convs[2].W, m.Convs[2].B, m.OutW, m.OutB} {
		for _, v := range x {
			w = binary.LittleEndian.AppendUint32(w, math.Float32bits(v))
		}
	}
	saved := nativeLittleEndian
	defer func() { nativeLittleEndian = saved }()
	var got [2]*Model
	for i, native := range []bool{true, false} {
		nativeLittleEndian = native
		got[i] = &Model{Config: m.Config}
		if err := got[i].readWeights(w, nil); err != nil {
			t.Fatal(err)
		}
	}
	for i, x := range got[1].Emb {
		if math.Float32bits(got[0].Emb[i]) != math.Float32bits(x) || math.Float32bits(x) != math.Float32bits(m.Emb[i]) {
			t.Fatalf("embedding value %d: copied %08x, decoded %08x, saved %08x", i,
				math.Float32bits(got[0].Emb[i]), math.Float32bits(x), math.Float32bits(m.Emb[i]))
		}
	}
	if !reflect.DeepEqual(got[0].Convs, got[1].Convs) || !reflect.DeepEqual(got[0].OutW, got[1].OutW) || !reflect.DeepEqual(got[0].OutB, got[1].OutB) {
		t.Fatal("the copied weights differ from the decoded ones")
	}
}
