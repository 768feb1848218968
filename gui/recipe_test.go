package gui

import (
	"reflect"
	"strings"
	"testing"

	"telltale/cnn"
)

// The training form's "Word vectors" check asks for the character layer
// as `telltale train --chars` does with its default sizes: the embedding
// dimension typed stays the word table's, the model's Dim is the whole
// word vector's width.
func TestRecipeFormChars(t *testing.T) {
	r := newRecipeForm()
	if on, _ := r.chars.Get(); on {
		t.Fatal("the form starts with character vectors on; cnn.DefaultRecipe has none")
	}
	_ = r.chars.Set(true)
	rec, _, err := r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Chars = &cnn.CharConfig{Filters: cnn.DefaultCharFilters, Width: cnn.DefaultCharWidth, Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
	want.Model.Dim += cnn.DefaultCharFilters
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with character vectors: %+v, want %+v", rec.Model, want.Model)
	}
	r.reset()
	if rec, _, err = r.parse(false); err != nil || rec.Model.Chars != nil {
		t.Errorf("after reset the form still asks for character vectors (%v)", err)
	}
}

// The form's "Word weights" check asks for the wide path as `telltale
// train --wide` does; the default recipe's setting is where it starts and
// where Defaults puts it back.
func TestRecipeFormWide(t *testing.T) {
	r := newRecipeForm()
	def := cnn.DefaultRecipe()
	if on, _ := r.wide.Get(); on != def.Model.Wide {
		t.Fatalf("the form starts with the wide path %v; cnn.DefaultRecipe has %v", on, def.Model.Wide)
	}
	_ = r.wide.Set(!def.Model.Wide)
	rec, _, err := r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Wide = !def.Model.Wide
	if want.Model.Wide {
		want.Train.WideLR = cnn.DefaultWideLR // as train --wide
	}
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with the check flipped: %+v, want %+v", rec.Model, want.Model)
	}
	r.reset()
	if rec, _, err = r.parse(false); err != nil || rec.Model.Wide != def.Model.Wide {
		t.Errorf("after reset the form asks for the wide path %v (%v)", rec.Model.Wide, err)
	}
}

// The form's "Word pairs" check asks for bigram weights as `telltale train
// --wide --wide-bigrams` does, and, as train refuses --wide-bigrams without
// --wide, is refused without "Word weights", naming both checks.
func TestRecipeFormWideBigrams(t *testing.T) {
	r := newRecipeForm()
	if on, _ := r.wideBigrams.Get(); on != cnn.DefaultRecipe().Model.WideBigrams {
		t.Fatalf("the form starts with bigram weights %v", on)
	}
	_ = r.wideBigrams.Set(true)
	_ = r.wide.Set(false)
	if _, _, err := r.parse(false); err == nil || !strings.Contains(err.Error(), "Word weights") || !strings.Contains(err.Error(), "Word pairs") {
		t.Errorf("word pairs without word weights: error %v, want one naming both checks", err)
	}
	_ = r.wide.Set(true)
	rec, _, err := r.parse(false)
	if err != nil {
		t.Fatal(err)
	}
	want := cnn.DefaultRecipe()
	want.Model.Wide, want.Model.WideBigrams, want.Train.WideLR = true, true, cnn.DefaultWideLR
	if !reflect.DeepEqual(rec, want) {
		t.Errorf("with both checks: %+v, want %+v", rec.Model, want.Model)
	}
	r.reset()
	if on, _ := r.wideBigrams.Get(); on {
		t.Error("Defaults leave the word pairs checked")
	}
}
