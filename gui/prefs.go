package gui

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"sync"

	"fyne.io/fyne/v2"

	"telltale/internal/atomicfile"
)

// The window keeps the toolkit's preferences (only its file dialogs use
// them: the last folder and the list or grid layout) in a file of its own.
// The toolkit's own store (fyne v2.7.1, app/preferences.go) saves on the way
// out by truncating its file and writing it again, while its watcher of that
// folder may reload the file in between from another goroutine, and then
// logs "Preferences load error: EOF". This store writes a new file and
// renames it over the old one (internal/atomicfile), so no reader sees a
// partial file, and it watches nothing.

// appWithPreferences is a toolkit app whose Preferences are a
// storedPreferences and whose UniqueID is id.
type appWithPreferences struct {
	fyne.App
	id    string
	prefs *storedPreferences
}

var _ fyne.Preferences = (*storedPreferences)(nil)

func (a *appWithPreferences) Preferences() fyne.Preferences { return a.prefs }
func (a *appWithPreferences) UniqueID() string              { return a.id }

// WithStoredPreferences returns a with its preferences kept in the JSON file
// at path, and makes it the toolkit's current app, which its dialogs read.
// Precondition: a was made without an ID (app.NewWithID(""), and no ID in
// its metadata, which `fyne package` would add), so the toolkit keeps and
// watches no preferences file of its own; id is what the returned app's
// UniqueID reports. The toolkit's calls that would still need the inner
// app's ID (notifications with an icon, its document storage) are not used
// by the window, and the returned app hides the system-tray methods.
//
// Path "" keeps the preferences in memory alone. A missing file is an empty
// store. A file that cannot be read also starts an empty store, and the
// error is returned beside the app, which is usable either way. onError
// hears each later failure to save (nil: they are dropped), and must not set
// a preference; the values stay in memory.
func WithStoredPreferences(a fyne.App, id, path string, onError func(error)) (fyne.App, error) {
	p, err := loadPreferences(path)
	p.onError = onError
	wrapped := &appWithPreferences{App: a, id: id, prefs: p}
	fyne.SetCurrentApp(wrapped)
	return wrapped, err
}

// storedPreferences is a fyne.Preferences kept in memory and written whole
// to its file after each change (no file: path "").
type storedPreferences struct {
	path    string
	onError func(error)

	mu        sync.Mutex
	values    map[string]any
	listeners []func()

	saving sync.Mutex // one write at a time, each of the latest values
}

// loadPreferences reads the store at path; see WithStoredPreferences for
// what a missing or unreadable file gives.
func loadPreferences(path string) (*storedPreferences, error) {
	p := &storedPreferences{path: path, values: map[string]any{}}
	data, err := os.ReadFile(path)
	if errors.Is(err, fs.ErrNotExist) {
		return p, nil
	}
	if err == nil {
		if err = json.Unmarshal(data, &p.values); err != nil {
			err = fmt.Errorf("%s: %w", path, err)
		}
	}
	if p.values == nil || err != nil { // a file holding null unmarshals to a nil map
		p.values = map[string]any{}
	}
	if err != nil {
		return p, fmt.Errorf("the window's preferences could not be read (%v); it starts without them, and the next change replaces the file", err)
	}
	return p, nil
}

// save writes every value to the file.
func (p *storedPreferences) save() {
	if p.path == "" {
		return
	}
	p.saving.Lock()
	defer p.saving.Unlock()
	p.mu.Lock()
	data, err := json.Marshal(p.values)
	p.mu.Unlock()
	if err == nil {
		err = os.MkdirAll(filepath.Dir(p.path), 0o700)
	}
	if err == nil {
		err = atomicfile.Write(p.path, func(w io.Writer) error {
			_, err := w.Write(append(data, '\n'))
			return err
		})
	}
	if err != nil && p.onError != nil {
		p.onError(err)
	}
}

// set stores v (nil: removes key), saves and tells the listeners; a value
// equal to the one stored changes nothing (the file dialogs set their folder
// each time they show one).
func (p *storedPreferences) set(key string, v any) {
	p.mu.Lock()
	if old, ok := p.values[key]; ok == (v != nil) && reflect.DeepEqual(old, v) {
		p.mu.Unlock()
		return
	}
	if v == nil {
		delete(p.values, key)
	} else {
		p.values[key] = v
	}
	listeners := append([]func(){}, p.listeners...)
	p.mu.Unlock()
	p.save()
	for _, f := range listeners {
		f()
	}
}

func (p *storedPreferences) get(key string) (any, bool) {
	p.mu.Lock()
	defer p.mu.Unlock()
	v, ok := p.values[key]
	return v, ok
}

// number reads v as a float64: numbers read back from JSON are float64,
// those set in this run int or float64.
func number(v any) (float64, bool) {
	switch n := v.(type) {
	case float64:
		return n, true
	case int:
		return float64(n), true
	}
	return 0, false
}

// listOf reads v as a new list of T, each item converted by conv: lists
// read back from JSON are []any.
func listOf[T any](v any, conv func(any) (T, bool)) ([]T, bool) {
	if l, ok := v.([]T); ok {
		return append([]T{}, l...), true
	}
	items, ok := v.([]any)
	if !ok {
		return nil, false
	}
	out := make([]T, len(items))
	for i, it := range items {
		if out[i], ok = conv(it); !ok {
			return nil, false
		}
	}
	return out, true
}

func asBool(v any) (bool, bool)     { b, ok := v.(bool); return b, ok }
func asString(v any) (string, bool) { s, ok := v.(string); return s, ok }
func asInt(v any) (int, bool)       { f, ok := number(v); return int(f), ok }

// withFallback returns the value at key read by conv, or fallback.
func withFallback[T any](p *storedPreferences, key string, fallback T, conv func(any) (T, bool)) T {
	if v, ok := p.get(key); ok {
		if t, ok := conv(v); ok {
			return t
		}
	}
	return fallback
}

func (p *storedPreferences) Bool(key string) bool { return p.BoolWithFallback(key, false) }
func (p *storedPreferences) BoolWithFallback(key string, fallback bool) bool {
	return withFallback(p, key, fallback, asBool)
}
func (p *storedPreferences) SetBool(key string, value bool) { p.set(key, value) }

func (p *storedPreferences) BoolList(key string) []bool { return p.BoolListWithFallback(key, nil) }
func (p *storedPreferences) BoolListWithFallback(key string, fallback []bool) []bool {
	return withFallback(p, key, fallback, func(v any) ([]bool, bool) { return listOf(v, asBool) })
}
func (p *storedPreferences) SetBoolList(key string, value []bool) {
	p.set(key, append([]bool{}, value...))
}

func (p *storedPreferences) Float(key string) float64 { return p.FloatWithFallback(key, 0) }
func (p *storedPreferences) FloatWithFallback(key string, fallback float64) float64 {
	return withFallback(p, key, fallback, number)
}
func (p *storedPreferences) SetFloat(key string, value float64) { p.set(key, value) }

func (p *storedPreferences) FloatList(key string) []float64 { return p.FloatListWithFallback(key, nil) }
func (p *storedPreferences) FloatListWithFallback(key string, fallback []float64) []float64 {
	return withFallback(p, key, fallback, func(v any) ([]float64, bool) { return listOf(v, number) })
}
func (p *storedPreferences) SetFloatList(key string, value []float64) {
	p.set(key, append([]float64{}, value...))
}

func (p *storedPreferences) Int(key string) int { return p.IntWithFallback(key, 0) }
func (p *storedPreferences) IntWithFallback(key string, fallback int) int {
	return withFallback(p, key, fallback, asInt)
}
func (p *storedPreferences) SetInt(key string, value int) { p.set(key, value) }

func (p *storedPreferences) IntList(key string) []int { return p.IntListWithFallback(key, nil) }
func (p *storedPreferences) IntListWithFallback(key string, fallback []int) []int {
	return withFallback(p, key, fallback, func(v any) ([]int, bool) { return listOf(v, asInt) })
}
func (p *storedPreferences) SetIntList(key string, value []int) {
	p.set(key, append([]int{}, value...))
}

func (p *storedPreferences) String(key string) string { return p.StringWithFallback(key, "") }
func (p *storedPreferences) StringWithFallback(key, fallback string) string {
	return withFallback(p, key, fallback, asString)
}
func (p *storedPreferences) SetString(key string, value string) { p.set(key, value) }

func (p *storedPreferences) StringList(key string) []string {
	return p.StringListWithFallback(key, nil)
}
func (p *storedPreferences) StringListWithFallback(key string, fallback []string) []string {
	return withFallback(p, key, fallback, func(v any) ([]string, bool) { return listOf(v, asString) })
}
func (p *storedPreferences) SetStringList(key string, value []string) {
	p.set(key, append([]string{}, value...))
}

func (p *storedPreferences) RemoveValue(key string) { p.set(key, nil) }

func (p *storedPreferences) AddChangeListener(f func()) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.listeners = append(p.listeners, f)
}

func (p *storedPreferences) ChangeListeners() []func() {
	p.mu.Lock()
	defer p.mu.Unlock()
	return append([]func(){}, p.listeners...)
}
