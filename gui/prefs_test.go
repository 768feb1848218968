package gui

import (
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/test"
)

// Every kind of value the toolkit's Preferences take comes back the same
// from the file, in a store read afresh (common practice, no source: a
// preferences file must give back what was put in).
func TestStoredPreferencesRoundTrip(t *testing.T) {
	path := filepath.Join(t.TempDir(), "telltale", "preferences.json")
	p, err := loadPreferences(path)
	if err != nil {
		t.Fatal(err)
	}
	changes := 0
	p.AddChangeListener(func() { changes++ })
	p.SetBool("b", true)
	p.SetBoolList("bl", []bool{true, false})
	p.SetFloat("f", 0.25)
	p.SetFloatList("fl", []float64{1.5, -2})
	p.SetInt("i", 3)
	p.SetIntList("il", []int{4, -5})
	p.SetString("s", "/home/someone/data")
	p.SetStringList("sl", []string{"a", "b"})
	p.SetString("gone", "x")
	p.RemoveValue("gone")
	if changes != 10 {
		t.Errorf("the listener heard %d changes, want 10", changes)
	}
	q, err := loadPreferences(path)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want any
	}{
		{"Bool", q.Bool("b"), true},
		{"BoolList", q.BoolList("bl"), []bool{true, false}},
		{"Float", q.Float("f"), 0.25},
		{"FloatList", q.FloatList("fl"), []float64{1.5, -2}},
		{"Int", q.Int("i"), 3},
		{"IntList", q.IntList("il"), []int{4, -5}},
		{"String", q.String("s"), "/home/someone/data"},
		{"StringList", q.StringList("sl"), []string{"a", "b"}},
		{"removed", q.StringWithFallback("gone", "fallback"), "fallback"},
		{"missing", q.IntWithFallback("nothing", 7), 7},
		{"wrong kind", q.IntWithFallback("s", 7), 7},
	} {
		if !reflect.DeepEqual(c.got, c.want) {
			t.Errorf("%s: got %v, want %v", c.name, c.got, c.want)
		}
	}
	entries, err := os.ReadDir(filepath.Dir(path))
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) != 1 {
		t.Errorf("the folder holds %d entries, want the file alone (no temporary file left)", len(entries))
	}
}

// A file that cannot be read starts an empty store and says which file and
// what happens; the next change replaces it with one that reads.
func TestStoredPreferencesUnreadableFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "preferences.json")
	if err := os.WriteFile(path, []byte(`{"s": "x"`), 0o644); err != nil {
		t.Fatal(err)
	}
	p, err := loadPreferences(path)
	if err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "starts without them") {
		t.Fatalf("error %v: want one naming %s and what happens", err, path)
	}
	if got := p.String("s"); got != "" {
		t.Errorf("value %q from an unreadable file", got)
	}
	p.SetString("s", "y")
	q, err := loadPreferences(path)
	if err != nil || q.String("s") != "y" {
		t.Errorf("after a change: %q, %v; want y and no error", q.String("s"), err)
	}
}

// A failed save is told to onError and keeps the value in memory; path ""
// writes nothing.
func TestStoredPreferencesSaveFailure(t *testing.T) {
	dir := t.TempDir()
	blocker := filepath.Join(dir, "file")
	if err := os.WriteFile(blocker, nil, 0o644); err != nil {
		t.Fatal(err)
	}
	p, _ := loadPreferences(filepath.Join(blocker, "preferences.json")) // unreadable too: "not a directory"
	var told []error
	p.onError = func(err error) { told = append(told, err) }
	p.SetInt("i", 2)
	if len(told) != 1 || p.Int("i") != 2 {
		t.Errorf("told %v, value %d: want one error and the value kept", told, p.Int("i"))
	}

	mem, err := loadPreferences("")
	if err != nil {
		t.Fatal(err)
	}
	mem.onError = func(err error) { t.Errorf("path \"\" tried to save: %v", err) }
	mem.SetString("s", "x")
	if mem.String("s") != "x" {
		t.Error("path \"\": the value was not kept in memory")
	}
}

// The toolkit's dialogs reach the store through the current app.
func TestWithStoredPreferencesIsCurrent(t *testing.T) {
	a := test.NewApp()
	defer a.Quit()
	path := filepath.Join(t.TempDir(), "preferences.json")
	w, err := WithStoredPreferences(a, "org.example.window", path, nil)
	if err != nil {
		t.Fatal(err)
	}
	if fyne.CurrentApp() != w || w.UniqueID() != "org.example.window" {
		t.Fatalf("current app %v, id %q", fyne.CurrentApp(), w.UniqueID())
	}
	fyne.CurrentApp().Preferences().SetString("k", "v")
	if q, err := loadPreferences(path); err != nil || q.String("k") != "v" {
		t.Errorf("the current app's preferences did not reach %s: %q, %v", path, q.String("k"), err)
	}
}
