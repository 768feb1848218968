package statedict

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/binary"
	"encoding/json"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"strings"
	"sync"
	"testing"

	"telltale/internal/testref"
)

// torchFiles runs testdata/save_files.py once with Debian's python3-torch
// and returns the folder holding the files and what PyTorch reads from them.
var torchFiles = sync.OnceValues(func() (string, error) {
	dir, err := os.MkdirTemp("", "statedict")
	if err != nil {
		return "", err
	}
	torchDir = dir
	out, err := exec.Command(testref.Python, "testdata/save_files.py", dir).CombinedOutput()
	if err != nil {
		return "", errors.New(string(out))
	}
	return dir, nil
})

// torchDir is the folder torchFiles made, removed after the tests.
var torchDir string

func TestMain(m *testing.M) {
	code := m.Run()
	if torchDir != "" {
		os.RemoveAll(torchDir)
	}
	os.Exit(code)
}

type expectedTensor struct {
	Key    string    `json:"key"`
	Shape  []int     `json:"shape"`
	Dtype  string    `json:"dtype"`
	Values []float32 `json:"values"`
	Ints   []int64   `json:"ints"`
}

func savedByTorch(t *testing.T) (string, map[string][]expectedTensor) {
	t.Helper()
	testref.RequirePython(t, "torch")
	dir, err := torchFiles()
	if err != nil {
		t.Fatalf("testdata/save_files.py: %v", err)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	var exp struct {
		Files map[string][]expectedTensor `json:"files"`
		Torch string                      `json:"torch"`
	}
	if err := json.Unmarshal(raw, &exp); err != nil {
		t.Fatal(err)
	}
	t.Logf("files written by torch %s", exp.Torch)
	return dir, exp.Files
}

// Every tensor of files written by torch.save (zip and legacy formats, a
// checkpoint dictionary, parameters, strided views, shared storages,
// float64, float16, bfloat16 and int64 tensors, a strided int64 view) has
// the keys, order, shapes and values PyTorch itself reads back (Debian's python3-torch, script
// testdata/save_files.py). Float32, float16 and bfloat16 values convert
// exactly and float64 ones are rounded to nearest by both sides, so the
// comparison is exact.
func TestReadMatchesTorch(t *testing.T) {
	dir, files := savedByTorch(t)
	for name, want := range files {
		t.Run(name, func(t *testing.T) {
			sd, err := Read(context.Background(), filepath.Join(dir, name), Options{})
			if err != nil {
				t.Fatal(err)
			}
			var keys []string
			for _, w := range want {
				keys = append(keys, w.Key)
			}
			if !slices.Equal(sd.Keys, keys) {
				t.Fatalf("keys %v, torch %v", sd.Keys, keys)
			}
			if wantFmt := map[bool]string{true: "legacy", false: "zip"}[strings.Contains(name, "legacy")]; sd.Format != wantFmt {
				t.Errorf("format %q, want %q", sd.Format, wantFmt)
			}
			if name == "checkpoint.pt" && sd.Entry != "model_state_dict" {
				t.Errorf("entry %q, want model_state_dict", sd.Entry)
			}
			for _, w := range want {
				got := sd.Tensors[w.Key]
				if !slices.Equal(got.Shape, w.Shape) || got.Dtype.String() != w.Dtype {
					t.Errorf("%s: shape %v %s, torch %v %s", w.Key, got.Shape, got.Dtype, w.Shape, w.Dtype)
					continue
				}
				if !slices.Equal(got.Data, w.Values) || !slices.Equal(got.Ints, w.Ints) {
					t.Errorf("%s: values %v %v, torch %v %v", w.Key, got.Data, got.Ints, w.Values, w.Ints)
				}
			}
		})
	}
}

// A pickle that asks for a function (os.system, pickled by Python as
// posix.system) or for a class of the user's module (torch.save(model)
// rather than its state_dict) is refused, naming the global, and nothing
// is run.
func TestReadRefusesCode(t *testing.T) {
	dir, _ := savedByTorch(t)
	for name, global := range map[string]string{"evil.pt": "posix.system", "whole_module.pt": "__main__.Kim"} {
		_, err := Read(context.Background(), filepath.Join(dir, name), Options{})
		if !errors.Is(err, ErrRefused) || !strings.Contains(err.Error(), global) || !strings.Contains(err.Error(), name) {
			t.Errorf("%s: %v, want ErrRefused naming %s and the file", name, err, global)
		}
	}
}

// zipOf builds a torch.save-like archive with the given data.pkl and
// storage entries.
func zipOf(t testing.TB, pkl []byte, storages map[string][]byte) []byte {
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	add := func(name string, b []byte) {
		w, err := zw.CreateHeader(&zip.FileHeader{Name: name, Method: zip.Store})
		if err != nil {
			t.Fatal(err)
		}
		w.Write(b)
	}
	add("archive/data.pkl", pkl)
	for k, b := range storages {
		add("archive/data/"+k, b)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// goodPickle is the state_dict {"w": a float32 tensor of shape (2,)} as
// torch.save writes it (protocol 2), stored in one storage "0".
var goodPickle = []byte("\x80\x02ccollections\nOrderedDict\nq\x00)Rq\x01(X\x01\x00\x00\x00wq\x02ctorch._utils\n_rebuild_tensor_v2\nq\x03((X\x07\x00\x00\x00storageq\x04ctorch\nFloatStorage\nq\x05X\x01\x00\x00\x000q\x06X\x03\x00\x00\x00cpuq\x07K\x02tq\x08QK\x00K\x02\x85K\x01\x85\x89h\x00)Rtq\tRq\nu.")

var goodStorage = []byte{0, 0, 0x80, 0x3f, 0, 0, 0, 0x40} // 1.0, 2.0

// Hand-made files: the minimal state_dict reads back; bad ones give the
// error kind named, with the file's name in the message. (Byte layouts
// from the pickletools opcode table of the Python Library Reference.)
func TestReadBadFiles(t *testing.T) {
	dir := t.TempDir()
	good := zipOf(t, goodPickle, map[string][]byte{"0": goodStorage})
	cases := []struct {
		name string
		data []byte
		want error
		says string
	}{
		{"good.pt", good, nil, ""},
		{"empty.pt", nil, ErrNotTorch, "empty"},
		{"text.pt", []byte("hello, world"), ErrNotTorch, "neither a zip archive nor a pickle"},
		{"truncated.pt", good[:len(good)/2], ErrDamaged, "truncated or damaged"},
		{"nopkl.pt", func() []byte {
			var b bytes.Buffer
			zw := zip.NewWriter(&b)
			w, _ := zw.Create("x/other.txt")
			w.Write([]byte("x"))
			zw.Close()
			return b.Bytes()
		}(), ErrNotTorch, "data.pkl"},
		{"system.pt", zipOf(t, []byte("\x80\x02cos\nsystem\nX\x04\x00\x00\x00echo\x85R."), nil), ErrRefused, "os.system"},
		{"eval.pt", zipOf(t, []byte("\x80\x02c__builtin__\neval\nX\x01\x00\x00\x001\x85R."), nil), ErrRefused, "__builtin__.eval"},
		{"stackglobal.pt", zipOf(t, []byte("\x80\x04\x8c\x08builtins\x8c\x04exec\x93."), nil), ErrRefused, "builtins.exec"},
		{"newobj.pt", zipOf(t, []byte("\x80\x02ccollections\nOrderedDict\n)\x81."), nil), ErrDamaged, "builds an object"},
		{"nostorage.pt", zipOf(t, goodPickle, nil), ErrDamaged, "data/0"},
		{"shortstorage.pt", zipOf(t, goodPickle, map[string][]byte{"0": goodStorage[:4]}), ErrDamaged, "needs 8"},
		{"pkltrunc.pt", zipOf(t, goodPickle[:40], nil), ErrDamaged, "truncated"},
		{"list.pt", zipOf(t, []byte("\x80\x02]."), nil), ErrNoStateDict, "list"},
		{"nodict.pt", zipOf(t, []byte("\x80\x02}X\x01\x00\x00\x00aK\x01s."), nil), ErrNoStateDict, "\"a\""},
		{"bigview.pt", zipOf(t, bytes.Replace(goodPickle, []byte("K\x02\x85K\x01\x85"), []byte("K\x03\x85K\x01\x85"), 1), map[string][]byte{"0": goodStorage}), ErrDamaged, "reach past the storage"},
		{"legacynomagic.pt", []byte("\x80\x02K\x01."), ErrNotTorch, "magic"},
	}
	for _, c := range cases {
		p := filepath.Join(dir, c.name)
		if err := os.WriteFile(p, c.data, 0o644); err != nil {
			t.Fatal(err)
		}
		sd, err := Read(context.Background(), p, Options{})
		if c.want == nil {
			if err != nil {
				t.Fatalf("%s: %v", c.name, err)
			}
			if !slices.Equal(sd.Keys, []string{"w"}) || !slices.Equal(sd.Tensors["w"].Data, []float32{1, 2}) {
				t.Errorf("%s: %v %v", c.name, sd.Keys, sd.Tensors["w"])
			}
			continue
		}
		if !errors.Is(err, c.want) || !strings.Contains(err.Error(), c.name) || !strings.Contains(err.Error(), c.says) {
			t.Errorf("%s: %v\nwant %v naming the file and saying %q", c.name, err, c.want, c.says)
		}
	}
}

// FuzzPickle runs the pickle reader on arbitrary bytes with storages of
// every key: it must end in a value or an error, never panic, and never
// build a tensor that reaches past its storage.
func FuzzPickle(f *testing.F) {
	f.Add(goodPickle)
	f.Add([]byte("\x80\x02cos\nsystem\nX\x04\x00\x00\x00echo\x85R."))
	f.Add([]byte("\x80\x02}q\x00(X\x01\x00\x00\x00a]q\x01h\x01ae\x8a\x0a\x6c\xfc\x9c\x46\xf9\x20\x6a\xa8\x50\x19u."))
	f.Fuzz(func(t *testing.T, data []byte) {
		storages := map[string]*storageRef{}
		u := &unpickler{data: data, persistent: func(pid any) (any, error) {
			tp, ok := pid.(tuple)
			if !ok || len(tp) != 5 {
				return nil, errors.New("not a storage")
			}
			return storageOf(tp, storages)
		}}
		root, err := u.load()
		if err != nil {
			return
		}
		sd, refs, err := pick(root, "")
		if err != nil {
			return
		}
		load := func(s *storageRef) ([]byte, error) {
			if s.numel > 1<<16 {
				return nil, errors.New("large")
			}
			return make([]byte, s.numel*int64(s.dtype.Size())), nil
		}
		_ = fill(context.Background(), sd, refs, load, binary.LittleEndian, nil)
	})
}
