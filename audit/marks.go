package audit

import (
	"bytes"
	"fmt"
	"io"
	"slices"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/atomicfile"
	"telltale/internal/inputfile"
)

// The two marks a person can give a cue.
const (
	// MarkArtifact: the cue is how the data was collected; the audit ranks
	// it as artifact-like whatever its signals say and acts on it when the
	// model relies on it.
	MarkArtifact = "artifact"
	// MarkTask: the cue is language of the task; the audit lists it apart
	// and never acts on it.
	MarkTask = "task"
)

// Marks are a person's verdicts on cues, kept in a plain-text file beside
// the model (MarksPath). The format is ours:
//
//	# comment lines and blank lines are skipped
//	artifact	- - sent via kioskmail at the quayside terminal - -
//	task	not
//
// One cue a line: the word artifact or task, white space, then the cue's
// words as the audit writes them (the model's words, lower-cased if its
// tokenizer lower-cases, separated by single spaces; <number> stands for
// any number). A cue may be marked once.
type Marks struct {
	byCue map[string]string // words joined by " " → mark
}

// NewMarks returns empty marks.
func NewMarks() *Marks { return &Marks{byCue: map[string]string{}} }

// MarksPath is the marks file beside a model file: the model's path with
// its extension replaced by ".marks" (model.tt → model.marks).
func MarksPath(modelPath string) string {
	ext := ""
	if i := strings.LastIndexByte(modelPath, '.'); i > strings.LastIndexByte(modelPath, '/') {
		ext = modelPath[i:]
	}
	return strings.TrimSuffix(modelPath, ext) + ".marks"
}

// Get returns the mark of a cue given by its words ("" when unmarked).
func (mk *Marks) Get(words []string) string {
	if mk == nil {
		return ""
	}
	return mk.byCue[strings.Join(words, " ")]
}

// Set marks a cue (kind MarkArtifact or MarkTask; "" removes the mark).
// Words must be the cue's words as the audit writes them.
func (mk *Marks) Set(words []string, kind string) error {
	if kind != "" && kind != MarkArtifact && kind != MarkTask {
		return inputErrorf("audit: mark %q: use %s or %s", kind, MarkArtifact, MarkTask)
	}
	if len(words) == 0 {
		return inputErrorf("audit: a mark needs the cue's words")
	}
	key := strings.Join(words, " ")
	if kind == "" {
		delete(mk.byCue, key)
	} else {
		mk.byCue[key] = kind
	}
	return nil
}

// Cues lists the marked cues of one kind, each as its words, sorted.
func (mk *Marks) Cues(kind string) [][]string {
	if mk == nil {
		return nil
	}
	var keys []string
	for k, v := range mk.byCue {
		if v == kind {
			keys = append(keys, k)
		}
	}
	slices.Sort(keys)
	out := make([][]string, len(keys))
	for i, k := range keys {
		out[i] = strings.Split(k, " ")
	}
	return out
}

// Len is the number of marked cues.
func (mk *Marks) Len() int {
	if mk == nil {
		return 0
	}
	return len(mk.byCue)
}

// Patterns are the artifact-marked cues as patterns for corpus.MaskTokens
// (one regular expression each), to take them out of the text before
// retraining.
func (mk *Marks) Patterns() []string {
	var out []string
	for _, ws := range mk.Cues(MarkArtifact) {
		out = append(out, pattern(ws))
	}
	return out
}

// ReadMarks reads a marks file and checks every word against the model's
// vocabulary. A missing file is an error wrapping os.ErrNotExist (the
// caller may start from NewMarks). Every other problem is an error naming
// the file, the line and the fix, wrapping ErrInput.
func ReadMarks(path string, m *cnn.Model) (*Marks, error) {
	data, err := inputfile.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("audit: marks file: %w", err)
	}
	return ParseMarks(path, data, m)
}

// ParseMarks parses the contents of a marks file (see Marks); name names
// it in messages. M may be nil to skip the vocabulary check.
func ParseMarks(name string, data []byte, m *cnn.Model) (*Marks, error) {
	known := map[string]bool{NumberWord: true}
	if m != nil {
		for _, w := range m.Vocab {
			known[w] = true
		}
	}
	entries, err := corpus.ParseList(name, data)
	if err != nil { // the list reader's message names the file, the line and the fix
		return nil, inputErrorf("audit: %s", strings.TrimPrefix(err.Error(), "corpus: "))
	}
	mk := NewMarks()
	for _, e := range entries {
		bad := func(format string, args ...any) error {
			return inputErrorf("audit: %s line %d: %s", name, e.Line, fmt.Sprintf(format, args...))
		}
		f := strings.Fields(e.Text)
		kind := f[0]
		if kind != MarkArtifact && kind != MarkTask {
			return nil, bad("%q: a line starts with %s or %s, then the cue's words", kind, MarkArtifact, MarkTask)
		}
		if len(f) == 1 {
			return nil, bad("%s with no words: write the cue's words after it", kind)
		}
		words := f[1:]
		if m != nil {
			for _, w := range words {
				if !known[w] {
					return nil, bad("%q is not a word of the model's vocabulary: write the cue's words as the audit shows them (%s stands for any number), or remove the line", w, NumberWord)
				}
			}
		}
		key := strings.Join(words, " ")
		if prev, ok := mk.byCue[key]; ok {
			return nil, bad("the cue %q is marked twice (%s and %s): keep one line", key, prev, kind)
		}
		mk.byCue[key] = kind
	}
	return mk, nil
}

// WriteTo writes the marks in the file format, artifacts first, each kind
// sorted.
func (mk *Marks) WriteTo(w io.Writer) (int64, error) {
	var b bytes.Buffer
	b.WriteString("# telltale marks: one cue a line, \"artifact\" or \"task\", then the cue's words as the audit shows them\n")
	b.WriteString("# (" + NumberWord + " stands for any number). telltale audit ranks, acts and tells by these marks.\n")
	for _, kind := range []string{MarkArtifact, MarkTask} {
		for _, ws := range mk.Cues(kind) {
			b.WriteString(kind + "\t" + strings.Join(ws, " ") + "\n")
		}
	}
	n, err := w.Write(b.Bytes())
	return int64(n), err
}

// Write writes the marks to path atomically (a half-written file is never
// left behind).
func (mk *Marks) Write(path string) error {
	return atomicfile.Write(path, func(w io.Writer) error { _, err := mk.WriteTo(w); return err })
}
