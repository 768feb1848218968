package corpus

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// TestMessagesRepeatLittleOfTheInput: a message quotes at most about 200
// bytes of any one value of the input, however long the line it comes from.
func TestMessagesRepeatLittleOfTheInput(t *testing.T) {
	huge := strings.Repeat("x", 5<<20)
	half := huge[:3<<20] // two of them stay under the 8 MiB record limit
	cases := []struct {
		name, file, content string
		opt                 Options
		want                string
	}{
		{"one-column header", "a.csv", huge + ";y\nb;c\n", Options{}, "semicolon-separated"},
		{"unknown columns", "a.csv", half + ",y" + half + "\na,b\n", Options{}, "cannot tell which column holds the text"},
		{"named column missing", "a.csv", "text,label\na,b\n", Options{TextCol: huge}, "text column"},
		{"columns listed", "a.csv", half + ",y" + half + "\na,b\n", Options{TextCol: "x"}, "text column \"x\" not found"},
		{"jsonl label not a string", "a.jsonl", `{"text":"a","label":{"k":"` + huge + `"}}` + "\n", Options{MaxTextBytes: 8 << 20}, "a label must be"},
		{"jsonl text not a string", "a.jsonl", `{"text":["` + huge + `"],"label":"x"}` + "\n", Options{MaxTextBytes: 8 << 20}, "the text must be a JSON string"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := writeFile(t, t.TempDir(), c.file, c.content)
			_, _, err := Load(p, c.opt)
			if err == nil {
				t.Fatal("no error")
			}
			if msg := err.Error(); len(msg) > 1000 || !strings.Contains(msg, c.want) {
				t.Errorf("message of %d bytes (want under 1000, with %q): %.300s", len(msg), c.want, msg)
			}
		})
	}
	d := &Dataset{Path: "d.csv", Examples: []Example{{Text: "t", Label: huge, Line: 2}}}
	if _, err := d.LabelIndex([]string{"a", "b"}); err == nil || len(err.Error()) > 1000 {
		t.Errorf("unknown label: %v", err != nil)
	}
}

// TestHeaderlessHint: a CSV file without its header row is told to add
// one, and one with a header of unknown names to name the column.
func TestHeaderlessHint(t *testing.T) {
	p := writeFile(t, t.TempDir(), "a.csv", "the ferry was late,complaints\nthanks to the crew,praise\n")
	_, _, err := Load(p, Options{})
	if !errors.Is(err, ErrColumn) {
		t.Fatalf("got %v", err)
	}
	for _, want := range []string{p + " line 1", `["the ferry was late" "complaints"]`, "the file lacks its header row", "e.g. text,label", "--text-col"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("%q lacks %q", err, want)
		}
	}
	// A TSV file is told to add a header in its own delimiter.
	p = writeFile(t, t.TempDir(), "a.tsv", "the ferry was late\tcomplaints\nthanks to the crew\tpraise\n")
	_, _, err = Load(p, Options{})
	if !errors.Is(err, ErrColumn) || !strings.Contains(err.Error(), "e.g. text, a tab, label (text<TAB>label)") || strings.Contains(err.Error(), "text,label") {
		t.Errorf("TSV without a header: %v", err)
	}
	p = writeFile(t, t.TempDir(), "a.jsonl", `{"words":"a","tag":"b","id":1}`+"\n")
	_, _, err = Load(p, Options{})
	if err == nil || strings.Contains(err.Error(), "header") || !strings.Contains(err.Error(), `the fields are ["id" "tag" "words"]: pass --text-col`) {
		t.Errorf("JSON Lines: %v", err)
	}
}

func TestJSONLabelValues(t *testing.T) {
	p := writeFile(t, t.TempDir(), "a.jsonl", `{"text":"a","label":true}`+"\n"+`{"text":"b","label":3}`+"\n"+`{"text":"c","label":null}`+"\n")
	_, _, err := Load(p, Options{})
	if err == nil || !strings.Contains(err.Error(), p+" line 3: field \"label\": is null: a label must be a string, a number, true or false") {
		t.Errorf("got %v", err)
	}
}

// TestUnlabeled: texts to label are read from CSV with or without a label
// column, JSON Lines and folders with files at the top level.
func TestUnlabeled(t *testing.T) {
	dir := t.TempDir()
	opt := Options{Unlabeled: true}
	read := func(path string, o Options) []string {
		t.Helper()
		d, _, err := Load(path, o)
		if err != nil {
			t.Fatal(err)
		}
		var got []string
		for _, e := range d.Examples {
			got = append(got, e.Label+"|"+e.Text)
		}
		return got
	}
	for _, c := range []struct {
		name, file, content string
		opt                 Options
		want                []string
	}{
		{"one column", "one.csv", "text\nfirst\n\"two\nlines\"\n", opt, []string{"|first", "|two\nlines"}},
		{"an unnamed column", "one2.csv", "message\nhello\n", opt, []string{"|hello"}},
		{"with labels", "two.csv", "text,label\na,x\nb,x\n", opt, []string{"x|a", "x|b"}},
		{"other columns", "three.csv", "id,body,when\n1,hi,today\n", opt, []string{"|hi"}},
		{"named column", "n.csv", "id,words\n1,hi\n", Options{Unlabeled: true, TextCol: "words"}, []string{"|hi"}},
		{"json lines", "a.jsonl", `{"text":"a","id":1}` + "\n" + `{"text":"b","id":2}` + "\n", opt, []string{"|a", "|b"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := read(writeFile(t, dir, c.file, c.content), c.opt); !reflect.DeepEqual(got, c.want) {
				t.Errorf("got %q, want %q", got, c.want)
			}
		})
	}
	folder := filepath.Join(dir, "folder")
	writeFile(t, folder, "1.txt", "top")
	writeFile(t, folder, "ham/2.txt", "in a label folder")
	if got, want := read(folder, opt), []string{"|top", "ham|in a label folder"}; !reflect.DeepEqual(got, want) {
		t.Errorf("folder: %q, want %q", got, want)
	}
	// Labeled reading still needs a label column.
	if _, _, err := Load(filepath.Join(dir, "one.csv"), Options{}); !errors.Is(err, ErrColumn) {
		t.Errorf("labeled reading of a text-only file: %v", err)
	}
}

// TestFolderSymlinks: a symbolic link in a data folder, a label folder or
// a file, is not followed, and the warning says so and what to do.
func TestFolderSymlinks(t *testing.T) {
	dir := t.TempDir()
	outside := writeFile(t, dir, "outside/secret.txt", "outside word")
	root := filepath.Join(dir, "data")
	writeFile(t, root, "ham/1.txt", "hello")
	writeFile(t, root, "spam/1.txt", "buy")
	if err := os.Symlink(filepath.Join(dir, "outside"), filepath.Join(root, "linked")); err != nil {
		t.Fatal(err)
	}
	if err := os.Symlink(outside, filepath.Join(root, "ham", "2.txt")); err != nil {
		t.Fatal(err)
	}
	d, ws, err := Load(root, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got := d.Texts(); !reflect.DeepEqual(got, []string{"hello", "buy"}) {
		t.Errorf("texts %q", got)
	}
	var got []string
	for _, w := range ws {
		got = append(got, w.String())
	}
	want := []string{
		"corpus: " + filepath.Join(root, "ham", "2.txt") + ": " + symlinkSkipped,
		"corpus: " + filepath.Join(root, "linked") + ": " + symlinkSkipped,
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("warnings\n%q\nwant\n%q", got, want)
	}
	if !strings.Contains(symlinkSkipped, "not followed") {
		t.Errorf("the warning does not say the link is not followed: %s", symlinkSkipped)
	}
}

// A bad-input message ends with its fix, not with the text of the sentinel
// it wraps ("… check the path: corpus: no examples" read as two messages),
// while errors.Is still tells its kind.
func TestMessagesEndWithTheirFix(t *testing.T) {
	dir := t.TempDir()
	one := filepath.Join(dir, "one.csv")
	if err := os.WriteFile(one, []byte("text,label\na ferry,ham\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	vec := filepath.Join(dir, "v.txt")
	if err := os.WriteFile(vec, []byte("ferry 1 2\nquay 1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, _, missing := Load(filepath.Join(dir, "missing.csv"), Options{})
	_, _, single := Load(one, Options{})
	_, vectors := ReadVectors(vec, nil)
	_, pattern := ParseCueMasker("p.txt", []byte("/[0-9/\n"))
	for _, c := range []struct {
		err, kind error
	}{{missing, ErrEmpty}, {single, ErrLabel}, {vectors, ErrVectors}, {pattern, ErrCuePattern}} {
		if !errors.Is(c.err, c.kind) {
			t.Errorf("%v: not of kind %v", c.err, c.kind)
			continue
		}
		if strings.Contains(c.err.Error(), c.kind.Error()) {
			t.Errorf("%q repeats its kind's text %q", c.err, c.kind)
		}
	}
}
