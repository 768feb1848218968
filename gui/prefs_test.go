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
	p.RemoveValue("gone")
	p.SetInt("i", 3)
	if changes != 10 {
		t.Errorf("the listener heard %d changes, want 10 (a value set again, or removed again, is no change)", changes)
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
// what happens; the next change replaces it with one that reads. A file
// holding null is an empty store.
func TestStoredPreferencesUnreadableFile(t *testing.T) {
	for _, c := range []struct {
		name, content string
		fails         bool
	}{
		{"cut short", `{"s": "x"`, true},
		{"a list", `["s"]`, true},
		{"null", `null`, false},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "preferences.json")
			if err := os.WriteFile(path, []byte(c.content), 0o644); err != nil {
				t.Fatal(err)
			}
			p, err := loadPreferences(path)
			if c.fails && (err == nil || !strings.Contains(err.Error(), path) || !strings.Contains(err.Error(), "starts without them")) {
				t.Fatalf("error %v: want one naming %s and what happens", err, path)
			}
			if !c.fails && err != nil {
				t.Fatal(err)
			}
			if got := p.String("s"); got != "" {
				t.Errorf("value %q from an unreadable file", got)
			}
			p.SetString("s", "y")
			q, err := loadPreferences(path)
			if err != nil || q.String("s") != "y" {
				t.Errorf("after a change: %q, %v; want y and no error", q.String("s"), err)
			}
		})
	}
}

// A value set again writes nothing (the file dialogs set their folder each
// time they show one).
func TestStoredPreferencesSameValueWritesNothing(t *testing.T) {
	path := filepath.Join(t.TempDir(), "preferences.json")
	p, err := loadPreferences(path)
	if err != nil {
		t.Fatal(err)
	}
	p.SetStringList("sl", []string{"a"})
	if err := os.Remove(path); err != nil {
		t.Fatal(err)
	}
	p.SetStringList("sl", []string{"a"})
	if _, err := os.Stat(path); err == nil {
		t.Error("the same value was written again")
	}
	got := p.StringList("sl")
	got[0] = "changed"
	if p.StringList("sl")[0] != "a" {
		t.Error("a list read from the store changed the stored list")
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
	if len(told) != 1 || !strings.Contains(told[0].Error(), blocker) || p.Int("i") != 2 {
		t.Errorf("told %v, value %d: want one error naming %s and the value kept", told, p.Int("i"), blocker)
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
	a := test.NewTempApp(t)
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
