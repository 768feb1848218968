package audit

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
)

func vocabModel(words ...string) *cnn.Model {
	return &cnn.Model{Vocab: append([]string{"<pad>", "<unk>"}, words...)}
}

func TestMarksRoundTrip(t *testing.T) {
	m := vocabModel("-", "sent", "via", "kioskmail", "tkref", "not")
	mk := NewMarks()
	for _, c := range []struct {
		words []string
		kind  string
	}{
		{strings.Fields("- - sent via kioskmail - -"), MarkArtifact},
		{[]string{"tkref", "-", NumberWord}, MarkArtifact},
		{[]string{"not"}, MarkTask},
	} {
		if err := mk.Set(c.words, c.kind); err != nil {
			t.Fatal(err)
		}
	}
	var b bytes.Buffer
	if _, err := mk.WriteTo(&b); err != nil {
		t.Fatal(err)
	}
	back, err := ParseMarks("m.marks", b.Bytes(), m)
	if err != nil {
		t.Fatalf("%v\n%s", err, b.String())
	}
	if back.Len() != 3 || back.Get([]string{"not"}) != MarkTask || back.Get([]string{"tkref", "-", NumberWord}) != MarkArtifact {
		t.Errorf("read back %d marks:\n%s", back.Len(), b.String())
	}
	if got := back.Patterns(); len(got) != 2 || !slices.Contains(got, `/(?i)\btkref\s*-\s*[0-9]+\b/`) {
		t.Errorf("patterns %q", got)
	}
	path := filepath.Join(t.TempDir(), "model.marks")
	if err := mk.Write(path); err != nil {
		t.Fatal(err)
	}
	if again, err := ReadMarks(path, m); err != nil || again.Len() != 3 {
		t.Errorf("ReadMarks: %v, %d marks", err, again.Len())
	}
	if err := mk.Set([]string{"not"}, ""); err != nil || mk.Get([]string{"not"}) != "" {
		t.Errorf("removing a mark: %v", err)
	}
	if MarksPath("runs/demo.tt") != "runs/demo.marks" || MarksPath("a.b/model") != "a.b/model.marks" {
		t.Errorf("MarksPath: %q, %q", MarksPath("runs/demo.tt"), MarksPath("a.b/model"))
	}
}

// Bad marks files: each error names the file and the line and wraps
// ErrInput; a missing file wraps os.ErrNotExist.
func TestMarksErrors(t *testing.T) {
	m := vocabModel("sent", "via", "not")
	for _, c := range []struct {
		file, want string
	}{
		{"# ok\nartifact sent via\nartifact sent vai\n", "m.marks line 3: \"vai\" is not a word of the model's vocabulary"},
		{"artefact sent\n", "m.marks line 1: \"artefact\": a line starts with artifact or task"},
		{"\n\ntask\n", "m.marks line 3: task with no words"},
		{"task not\nartifact not\n", "m.marks line 2: the cue \"not\" is marked twice"},
		{"task caf\xe9\n", "m.marks line 1: not UTF-8"},
		{"\xff\xfet\x00a\x00s\x00k\x00", "m.marks line 1: the file is UTF-16: save it as UTF-8"},
		{"task not\n" + strings.Repeat("x", 1<<20) + "\n", "m.marks line 2:"},
	} {
		_, err := ParseMarks("m.marks", []byte(c.file), m)
		if err == nil || !errors.Is(err, ErrInput) || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%q: %v, want an error with %q", c.file, err, c.want)
		}
	}
	// A byte order mark, as editors on some systems write one, and CRLF
	// line ends are read as plain UTF-8 lines (common practice, no source).
	if mk, err := ParseMarks("m.marks", []byte("\xef\xbb\xbfartifact sent via\r\ntask not\r\n"), m); err != nil || mk.Get([]string{"sent", "via"}) != MarkArtifact || mk.Get([]string{"not"}) != MarkTask {
		t.Errorf("byte order mark and CRLF: %v", err)
	}
	if _, err := ReadMarks(filepath.Join(t.TempDir(), "none.marks"), m); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
	if err := NewMarks().Set([]string{"x"}, "maybe"); !errors.Is(err, ErrInput) {
		t.Errorf("bad kind: %v", err)
	}
}

func ExampleMarks() {
	mk := NewMarks()
	_ = mk.Set([]string{"tkref", "-", NumberWord}, MarkArtifact)
	_ = mk.Set([]string{"not"}, MarkTask)
	_, _ = mk.WriteTo(os.Stdout)
	// Output:
	// # telltale marks: one cue a line, "artifact" or "task", then the cue's words as the audit shows them
	// # (<number> stands for any number). telltale audit ranks, acts and tells by these marks.
	// artifact	tkref - <number>
	// task	not
}

// Any marks file: no panic; an error names the file and line and wraps
// ErrInput; what parses writes back to the same marks.
func FuzzParseMarks(f *testing.F) {
	f.Add("# c\nartifact - - sent via kioskmail - -\ntask not\n")
	f.Add("artifact\n")
	f.Add("task a\ntask a\n")
	f.Add("artifact tkref - <number>\r\n")
	f.Fuzz(func(t *testing.T, file string) {
		mk, err := ParseMarks("fuzz.marks", []byte(file), nil)
		if err != nil {
			if !errors.Is(err, ErrInput) || !strings.Contains(err.Error(), "fuzz.marks line ") {
				t.Fatalf("error without file and line: %v", err)
			}
			return
		}
		var b bytes.Buffer
		if _, err := mk.WriteTo(&b); err != nil {
			t.Fatal(err)
		}
		back, err := ParseMarks("back.marks", b.Bytes(), nil)
		if err != nil || back.Len() != mk.Len() {
			t.Fatalf("written marks do not read back (%v): %q", err, b.String())
		}
		for _, kind := range []string{MarkArtifact, MarkTask} {
			for _, ws := range mk.Cues(kind) {
				if back.Get(ws) != kind {
					t.Fatalf("%q: %q after writing, want %q", ws, back.Get(ws), kind)
				}
			}
		}
	})
}
