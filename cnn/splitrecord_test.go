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

// TestRecordsRecipe: whether a model records its training recipe, read
// from the header alone, agrees with Load's Info.Recipe (the reference),
// for a model that has one and for the same model without it.
func TestRecordsRecipe(t *testing.T) {
	dir := t.TempDir()
	m, _ := savedModel(t)
	if m.Info.Recipe == nil {
		m.Info.Recipe = &TrainConfig{Epochs: 1}
	}
	for _, c := range []struct {
		name   string
		recipe *TrainConfig
	}{{"with", m.Info.Recipe}, {"without", nil}} {
		m.Info.Recipe = c.recipe
		p := filepath.Join(dir, c.name+".tt")
		if err := m.Save(p); err != nil {
			t.Fatal(err)
		}
		loaded, err := Load(p)
		if err != nil {
			t.Fatal(err)
		}
		got, err := RecordsRecipe(p)
		if err != nil || got != (loaded.Info.Recipe != nil) {
			t.Errorf("%s a recipe: RecordsRecipe = %v, %v; Load's recipe %v", c.name, got, err, loaded.Info.Recipe)
		}
	}
	if _, err := RecordsRecipe(filepath.Join(dir, "missing.tt")); err == nil {
		t.Error("a missing file: no error")
	}
}
