package cnn

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

// TestReadSplitRecord: the split record read from a model file's header
// alone is the one Load reads with the whole file (the reference); a model
// that records none gives nil; a file that is not a model, or a model file
// cut inside its header, gives an error naming the file.
func TestReadSplitRecord(t *testing.T) {
	dir := t.TempDir()
	m, data := savedModel(t)
	path := filepath.Join(dir, "m.tt")
	if err := os.WriteFile(path, data, 0o644); err != nil {
		t.Fatal(err)
	}
	loaded, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	got, err := ReadSplitRecord(path)
	if err != nil || got == nil || !reflect.DeepEqual(*got, *loaded.Info.Splits) || got.TestFile != m.Info.Splits.TestFile {
		t.Errorf("ReadSplitRecord = %+v, %v; want %+v, as Load reads it", got, err, loaded.Info.Splits)
	}

	m.Info.Splits = nil
	none := filepath.Join(dir, "none.tt")
	if err := m.Save(none); err != nil {
		t.Fatal(err)
	}
	if got, err := ReadSplitRecord(none); got != nil || err != nil {
		t.Errorf("a model without a split record: %+v, %v; want nil, nil", got, err)
	}

	notModel := filepath.Join(dir, "text.csv")
	os.WriteFile(notModel, []byte("text,label\nhello,a\n"), 0o644)
	if _, err := ReadSplitRecord(notModel); !errors.Is(err, ErrNotModel) {
		t.Errorf("a CSV file: %v; want ErrNotModel", err)
	}
	cut := filepath.Join(dir, "cut.tt")
	os.WriteFile(cut, data[:40], 0o644)
	if _, err := ReadSplitRecord(cut); err == nil {
		t.Errorf("a model file cut inside its header: no error")
	}
}
