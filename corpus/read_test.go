package corpus

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func writeFile(t *testing.T, dir, name, content string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestLoadFormats(t *testing.T) {
	type want struct {
		texts, labels []string
		lines         []int
	}
	cases := []struct {
		name, file, content string
		opt                 Options
		want                want
	}{
		{"csv", "a.csv", "text,label\nhello there,pos\n\"multi\nline, quoted\",neg\n",
			Options{}, want{[]string{"hello there", "multi\nline, quoted"}, []string{"pos", "neg"}, []int{2, 3}}},
		{"csv-crlf-bom", "a.csv", "\ufefftext,label\r\nhi,pos\r\nbye,neg\r\n",
			Options{}, want{[]string{"hi", "bye"}, []string{"pos", "neg"}, []int{2, 3}}},
		{"csv-label-first-trimmed", "a.csv", "label,text\n  pos ,a\nneg,b\n",
			Options{}, want{[]string{"a", "b"}, []string{"pos", "neg"}, []int{2, 3}}},
		{"csv-common-names", "a.csv", "id,review,sentiment\n1,good,p\n2,bad,n\n",
			Options{}, want{[]string{"good", "bad"}, []string{"p", "n"}, []int{2, 3}}},
		{"csv-two-columns-one-known", "a.csv", "Category,words\nx,one\ny,two\n",
			Options{}, want{[]string{"one", "two"}, []string{"x", "y"}, []int{2, 3}}},
		{"csv-named-columns", "a.csv", "a,b,c\n1,t1,l1\n2,t2,l2\n",
			Options{TextCol: "b", LabelCol: "C"}, want{[]string{"t1", "t2"}, []string{"l1", "l2"}, []int{2, 3}}},
		{"tsv", "a.tsv", "text\tlabel\nsay \"hi\"?\tq\nok, fine\ta\n",
			Options{}, want{nil, nil, nil}}, // bare quote: error case below; replaced here
		{"jsonl", "a.jsonl", "{\"text\":\"héllo 😀\",\"label\":\"pos\"}\r\n\n{\"label\":2,\"text\":\"b\"}\n",
			Options{}, want{[]string{"héllo 😀", "b"}, []string{"pos", "2"}, []int{1, 3}}},
		{"jsonl-no-final-newline", "a.ndjson", "{\"sentence\":\"a\",\"class\":\"x\"}\n{\"sentence\":\"b\",\"class\":\"y\"}",
			Options{}, want{[]string{"a", "b"}, []string{"x", "y"}, []int{1, 2}}},
		{"format-override", "data.txt", "text,label\na,x\nb,y\n",
			Options{Format: "csv"}, want{[]string{"a", "b"}, []string{"x", "y"}, []int{2, 3}}},
	}
	cases[6].content = "text\tlabel\nsay hi?\tq\nok, fine\ta\n"
	cases[6].want = want{[]string{"say hi?", "ok, fine"}, []string{"q", "a"}, []int{2, 3}}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := writeFile(t, t.TempDir(), c.file, c.content)
			d, _, err := Load(p, c.opt)
			if err != nil {
				t.Fatal(err)
			}
			var got want
			for _, e := range d.Examples {
				got.texts = append(got.texts, e.Text)
				got.labels = append(got.labels, e.Label)
				got.lines = append(got.lines, e.Line)
			}
			if !reflect.DeepEqual(got, c.want) {
				t.Errorf("got %+v\nwant %+v", got, c.want)
			}
		})
	}
}

func TestLoadBadInput(t *testing.T) {
	long := strings.Repeat("x", 10<<20)
	cases := []struct {
		name, file, content string
		opt                 Options
		sentinel            error
		line                string // expected "line N" part ("" = none expected)
		msg                 string // expected substring
	}{
		{"empty file", "a.csv", "", Options{}, ErrEmpty, "", "file is empty"},
		{"header only", "a.csv", "text,label\n", Options{}, ErrEmpty, "", "no examples"},
		{"unbalanced quotes", "a.csv", "text,label\nok,a\n\"never closed,b\nmore,c\n", Options{}, ErrFormat, "line 3", "malformed quoting"},
		{"bare quote", "a.csv", "text,label\nok,a\nsay \"hi\",b\n", Options{}, ErrFormat, "line 3", "malformed quoting"},
		{"field count", "a.csv", "text,label\nok,a\na,b,c\n", Options{}, ErrFormat, "line 3", "different number of fields"},
		{"wrong delimiter tab", "a.csv", "text\tlabel\nok\ta\n", Options{}, ErrFormat, "line 1", "tab"},
		{"wrong delimiter semicolon", "a.csv", "text;label\nok;a\n", Options{}, ErrFormat, "line 1", "semicolons"},
		{"tsv with commas", "a.tsv", "text,label\nok,a\n", Options{}, ErrFormat, "line 1", "commas"},
		{"missing column", "a.csv", "text,label\nok,a\nno,b\n", Options{TextCol: "body"}, ErrColumn, "line 1", `text column "body" not found; the columns are ["text" "label"]`},
		{"ambiguous columns", "a.csv", "id,words,tag\n1,a,b\n", Options{}, ErrColumn, "line 1", "--text-col"},
		{"ambiguous label columns", "a.csv", "text,class,target\na,b,c\n", Options{}, ErrColumn, "line 1", "--label-col"},
		{"duplicate column", "a.csv", "text,label,Text\na,b,c\n", Options{}, ErrColumn, "line 1", "appears twice"},
		{"nul byte", "a.csv", "text,label\nok,a\nb\x00ad,b\n", Options{}, ErrEncoding, "line 3", "NUL byte"},
		{"invalid utf8", "a.csv", "text,label\nok,a\n\"two\nlines caf\xe9\",b\n", Options{}, ErrEncoding, "line 4", "invalid UTF-8 byte 0xe9"},
		{"utf16", "a.csv", "\xff\xfet\x00e\x00", Options{}, ErrEncoding, "line 1", "UTF-16"},
		{"empty label", "a.csv", "text,label\nok,a\nfine, \n", Options{}, ErrLabel, "line 3", "empty label"},
		{"label with a line break", "a.csv", "text,label\nok,a\n\"fine\",\"b\nc\"\n", Options{}, ErrLabel, "line 3", `label "b\nc" holds a line break`},
		{"label with a tab after blank lines", "a.csv", "text,label\nok,a\nfine,\" \n\nb\tc\"\n", Options{}, ErrLabel, "line 3", `label "b\tc" holds a line break, a tab`},
		{"jsonl label with a tab", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"b\",\"label\":\"y\\tz\"}\n", Options{}, ErrLabel, "line 2", `label "y\tz" holds`},
		{"one label only", "a.csv", "text,label\nok,a\nfine,a\n", Options{}, ErrLabel, "", `only one label "a" in 2 examples`},
		{"one example only", "a.csv", "text,label\nok,a\n", Options{}, ErrLabel, "", `only one label "a" in 1 example:`},
		{"only empty texts", "a.csv", "text,label\n ,a\n,b\n", Options{}, ErrEmpty, "", "no examples"},
		{"10 MB single line csv", "a.csv", "text,label\n" + long + ",a\n", Options{}, ErrTooLong, "line 2", "record longer than"},
		{"10 MB single line jsonl", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"" + long + "\",\"label\":\"y\"}\n", Options{}, ErrTooLong, "line 2", "line longer than"},
		{"jsonl bad json", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\": \"b\", label: y}\n", Options{}, ErrFormat, "line 2", "not a JSON object"},
		{"jsonl array", "a.jsonl", "[{\"text\":\"a\",\"label\":\"x\"},\n{\"text\":\"b\",\"label\":\"y\"}]\n", Options{}, ErrFormat, "line 1", "the line holds a JSON array, not an object: the file looks like one JSON array rather than JSON Lines; convert it to one object per line, e.g. jq -c '.[]' FILE > FILE.jsonl"},
		{"jsonl one-line array", "a.jsonl", "[{\"text\":\"a\",\"label\":\"x\"}]\n", Options{}, ErrFormat, "line 1", "holds a JSON array, not an object"},
		{"jsonl string line", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n\"just text\"\n", Options{}, ErrFormat, "line 2", `the line holds a JSON string, not an object: write one object per line, like {"text": "...", "label": "..."}`},
		{"csv empty", "a.csv", "", Options{}, ErrEmpty, "", "file is empty: it needs a header row naming the text and label columns"},
		{"csv empty, texts to label", "a.csv", "", Options{Unlabeled: true}, ErrEmpty, "", "file is empty: it needs a header row naming the text column (and the label column, if the file has labels)"},
		{"jsonl missing field", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"b\"}\n", Options{}, ErrColumn, "line 2", `field "label": missing`},
		{"jsonl text not string", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":5,\"label\":\"y\"}\n", Options{}, ErrColumn, "line 2", "not a string"},
		{"jsonl empty label", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"b\",\"label\":\"  \"}\n", Options{}, ErrLabel, "line 2", "empty label"},
		{"jsonl nul", "a.jsonl", "{\"text\":\"a\",\"label\":\"x\"}\n{\"text\":\"b\x00\",\"label\":\"y\"}\n", Options{}, ErrEncoding, "line 2", "NUL byte"},
		{"jsonl empty", "a.jsonl", "", Options{}, ErrEmpty, "", "file is empty"},
		{"unknown extension", "a.txt", "text,label\n", Options{}, ErrFormat, "", "cannot tell the format"},
		{"unknown format", "a.csv", "text,label\n", Options{Format: "xml"}, ErrFormat, "", `unknown format "xml"`},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := writeFile(t, t.TempDir(), c.file, c.content)
			_, _, err := Load(p, c.opt)
			if err == nil {
				t.Fatal("no error")
			}
			if !errors.Is(err, c.sentinel) {
				t.Errorf("error %q does not wrap %v", err, c.sentinel)
			}
			msg := err.Error()
			if !strings.HasPrefix(msg, "corpus: "+p) {
				t.Errorf("error %q does not start with the path", msg)
			}
			if c.line != "" && !strings.Contains(msg, p+" "+c.line+":") {
				t.Errorf("error %q does not name %s", msg, c.line)
			}
			if c.line == "" && strings.Contains(msg, p+" line") {
				t.Errorf("error %q names a line, none expected", msg)
			}
			if !strings.Contains(msg, c.msg) {
				t.Errorf("error %q lacks %q", msg, c.msg)
			}
		})
	}
}

func TestLoadWarnings(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "a.csv", "text,label\n  ,a\nabcdeéf,b\n\"caf\xe9\",a\nok,b\nn\xefv,b\n")
	d, ws, err := Load(p, Options{MaxTextBytes: 6, ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{
		"corpus: " + p + " line 2: empty text skipped",
		"corpus: " + p + " line 3: text of 8 bytes truncated to 6 bytes (raise --max-text-bytes to keep more)",
		"corpus: " + p + " line 4: invalid UTF-8 in the text replaced by U+FFFD (if the file is Latin-1, convert it to UTF-8 first: iconv -f latin1 -t utf-8 IN > OUT)",
		"corpus: " + p + " line 6: invalid UTF-8 in the text replaced by U+FFFD", // the hint is given once
	}
	var got []string
	for _, w := range ws {
		got = append(got, w.String())
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("warnings\n%q\nwant\n%q", got, want)
	}
	// "abcdeéf" cut at 6 bytes would split "é" (bytes 5-6): the cut backs off to "abcde".
	texts := d.Texts()
	if wantT := []string{"abcde", "caf\uFFFD", "ok", "n\uFFFDv"}; !reflect.DeepEqual(texts, wantT) {
		t.Errorf("texts %q, want %q", texts, wantT)
	}
	if !reflect.DeepEqual(d.Labels, []string{"a", "b"}) {
		t.Errorf("labels %q", d.Labels)
	}
}

func TestLoadDir(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "ham/1.txt", "hello\r\nthere")
	writeFile(t, dir, "ham/1.json", `{"text":"hello"}`)
	writeFile(t, dir, "ham/2", "no extension")
	writeFile(t, dir, "ham/.hidden.txt", "hidden")
	writeFile(t, dir, "spam/a.TXT", "buy now")
	writeFile(t, dir, "spam/deeper/x.txt", "nested")
	writeFile(t, dir, "README.md", "top level")
	writeFile(t, dir, ".git/config", "hidden dir")
	d, ws, err := Load(dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range d.Examples {
		got = append(got, e.Label+":"+e.File+":"+e.Text)
	}
	want := []string{"ham:" + filepath.Join("ham", "1.txt") + ":hello\r\nthere", "ham:" + filepath.Join("ham", "2") + ":no extension", "spam:" + filepath.Join("spam", "a.TXT") + ":buy now"}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %q\nwant %q", got, want)
	}
	var msgs []string
	for _, w := range ws {
		msgs = append(msgs, w.String())
	}
	wantW := []string{
		"corpus: " + filepath.Join(dir, "ham") + ": 1 file skipped: only .txt files and files without extension are examples",
		"corpus: " + filepath.Join(dir, "spam") + ": 1 sub-folder ignored: put example files directly in the label folder",
		"corpus: " + dir + ": 1 file at the top level ignored: examples belong in one sub-folder per label",
	}
	if !reflect.DeepEqual(msgs, wantW) {
		t.Errorf("warnings %q\nwant %q", msgs, wantW)
	}
}

// TestLoadDirCountsTwo: with two of each, the folder warnings count in the
// plural (English number agreement, as TestLoadDir for one).
func TestLoadDirCountsTwo(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "ham/1.txt", "hello")
	writeFile(t, dir, "ham/1.json", `{"text":"hello"}`)
	writeFile(t, dir, "ham/1.html", "<p>hello</p>")
	writeFile(t, dir, "ham/deeper/x.txt", "nested")
	writeFile(t, dir, "ham/deepest/y.txt", "nested")
	writeFile(t, dir, "spam/1.txt", "buy now")
	writeFile(t, dir, "README.md", "top level")
	writeFile(t, dir, "LICENSE.md", "top level")
	_, ws, err := Load(dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	var msgs []string
	for _, w := range ws {
		msgs = append(msgs, w.String())
	}
	wantW := []string{
		"corpus: " + filepath.Join(dir, "ham") + ": 2 files skipped: only .txt files and files without extension are examples",
		"corpus: " + filepath.Join(dir, "ham") + ": 2 sub-folders ignored: put example files directly in the label folder",
		"corpus: " + dir + ": 2 files at the top level ignored: examples belong in one sub-folder per label",
	}
	if !reflect.DeepEqual(msgs, wantW) {
		t.Errorf("warnings %q\nwant %q", msgs, wantW)
	}
}

// TestLoadDirWithoutExamples: a folder that yields no example (empty, or
// holding data files instead of one sub-folder per label, as a folder of
// train.csv and test.csv does) is refused as a folder, with the folder
// layout and the file alternative, not with the advice for a file.
func TestLoadDirWithoutExamples(t *testing.T) {
	cases := []struct {
		name  string
		files map[string]string
	}{
		{"empty folder", nil},
		{"data files at the top level", map[string]string{"train.csv": "text,label\nok,a\nfine,b\n", "test.jsonl": `{"text":"a","label":"b"}`}},
		{"data files in label folders", map[string]string{"ham/part.csv": "text,label\nok,a\n"}},
	}
	for _, c := range cases {
		dir := t.TempDir()
		for name, content := range c.files {
			writeFile(t, dir, name, content)
		}
		_, _, err := Load(dir, Options{})
		want := "corpus: " + dir + ": no examples found in the folder: a data folder holds one sub-folder per label"
		if !errors.Is(err, ErrEmpty) || !strings.HasPrefix(err.Error(), want) || !strings.Contains(err.Error(), "give the file's path instead") {
			t.Errorf("%s: got %v, want %q…", c.name, err, want)
		}
	}
}

// TestLoadDirUnreadable: a label folder or an example file without read
// permission (EACCES, open(2)) is refused naming it once, with the fix.
func TestLoadDirUnreadable(t *testing.T) {
	if os.Geteuid() == 0 {
		t.Skip("the superuser reads files without read permission")
	}
	cases := []struct {
		name, unreadable, want string
	}{
		{"an example file", "b/2.txt", "the example file cannot be read (permission denied): make it readable, or move it out of the data folder"},
		{"a label folder", "b", "the label folder cannot be read (permission denied): make it readable, or move it out of the data folder"},
	}
	for _, c := range cases {
		dir := t.TempDir()
		writeFile(t, dir, "a/1.txt", "fine")
		writeFile(t, dir, "b/2.txt", "fine too")
		p := filepath.Join(dir, c.unreadable)
		if err := os.Chmod(p, 0); err != nil {
			t.Fatal(err)
		}
		_, _, err := Load(dir, Options{})
		if want := "corpus: " + p + ": " + c.want; err == nil || err.Error() != want {
			t.Errorf("%s: got %v, want %q", c.name, err, want)
		}
		os.Chmod(p, 0o755)
	}
}

// TestUnlabeledKeepsOddLabels: texts read to be labeled (predict's
// Unlabeled reading) keep a gold label holding a line break as it is, where
// labeled reading refuses it (TestLoadBadInput): the model never learns it.
func TestUnlabeledKeepsOddLabels(t *testing.T) {
	p := writeFile(t, t.TempDir(), "a.csv", "text,label\nok,a\n\"fine\",\"b\nc\"\n")
	d, _, err := Load(p, Options{Unlabeled: true})
	if err != nil || len(d.Examples) != 2 || d.Examples[1].Label != "b\nc" {
		t.Fatalf("got %v, %v", d, err)
	}
}

func TestLoadDirBadFile(t *testing.T) {
	dir := t.TempDir()
	writeFile(t, dir, "a/1.txt", "fine")
	bad := writeFile(t, dir, "b/1.txt", "line one\nline two caf\xe9\n")
	_, _, err := Load(dir, Options{})
	if !errors.Is(err, ErrEncoding) || !strings.Contains(err.Error(), bad+" line 2: invalid UTF-8") {
		t.Fatalf("got %v", err)
	}
	d, ws, err := Load(dir, Options{ReplaceInvalidUTF8: true})
	if err != nil || len(ws) != 1 || d.Examples[1].Text != "line one\nline two caf\uFFFD\n" {
		t.Fatalf("replace: %v %v %q", err, ws, d.Texts())
	}
}

func TestLoadNothingModified(t *testing.T) {
	dir := t.TempDir()
	p := writeFile(t, dir, "a.csv", "\ufefftext,label\r\na,x\r\nb,y\r\n")
	before, _ := os.ReadFile(p)
	st, _ := os.Stat(p)
	if _, _, err := Load(p, Options{}); err != nil {
		t.Fatal(err)
	}
	after, _ := os.ReadFile(p)
	st2, _ := os.Stat(p)
	ents, _ := os.ReadDir(dir)
	if string(before) != string(after) || !st.ModTime().Equal(st2.ModTime()) || len(ents) != 1 {
		t.Error("Load changed the folder")
	}
}

// A JSON-lines file longer than a batch of the parallel reader is read in
// file order with the warnings and the first error at the lines where
// reading one line at a time meets them (common practice, no source: the
// lines of the file are the reference).
func TestLoadJSONLManyLines(t *testing.T) {
	const n, bad = 2600, 2101
	var sb strings.Builder
	var wantTexts []string
	var wantWarn []int
	for line := 1; line <= n; line++ {
		switch {
		case line == bad:
			sb.WriteString("{\"text\": \"cut\n")
		case line%97 == 0:
			sb.WriteString("\n") // blank: skipped
		case line%89 == 0:
			sb.WriteString(`{"text": "  ", "label": "a"}` + "\n") // empty text: a warning
			if line < bad {
				wantWarn = append(wantWarn, line)
			}
		default:
			text := "text " + itoa(line)
			fmt.Fprintf(&sb, "{\"label\": %q, \"text\": %q}\n", []string{"a", "b"}[line%2], text)
			if line < bad {
				wantTexts = append(wantTexts, text)
			}
		}
	}
	path := writeFile(t, t.TempDir(), "many.jsonl", sb.String())
	var got []string
	ws, err := Stream(path, Options{}, func(e Example) error {
		if want := "text " + itoa(e.Line); e.Text != want {
			t.Fatalf("line %d holds %q, want %q", e.Line, e.Text, want)
		}
		got = append(got, e.Text)
		return nil
	})
	if err == nil || !errors.Is(err, ErrFormat) || !strings.Contains(err.Error(), "line "+itoa(bad)+":") {
		t.Fatalf("error %v, want a format error at line %d", err, bad)
	}
	if !reflect.DeepEqual(got, wantTexts) {
		t.Fatalf("%d texts before the bad line, want %d", len(got), len(wantTexts))
	}
	var warnLines []int
	for _, w := range ws {
		warnLines = append(warnLines, w.Line)
	}
	if !reflect.DeepEqual(warnLines, wantWarn[:min(len(wantWarn), maxWarnings)]) {
		t.Fatalf("warnings at lines %v, want %v", warnLines, wantWarn)
	}
	// fn's error stops reading at its line.
	stop := errors.New("stop")
	count := 0
	_, err = Stream(path, Options{}, func(e Example) error {
		if count++; e.Line >= 1500 {
			return stop
		}
		return nil
	})
	if err != stop || count != slices.Index(wantTexts, "text 1500")+1 {
		t.Fatalf("fn's error: %v after %d texts", err, count)
	}
}

func itoa(i int) string { return strconv.Itoa(i) }

// A text or label column found by a name other than text and label is
// named in a warning, so that a wrong guess is seen; a column named by an
// option, or the default names, give none.
func TestGuessedColumnsAreNamed(t *testing.T) {
	dir := t.TempDir()
	write := func(name, body string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	guessed := write("g.csv", "text,category\nthe ferry was late,complaint\nlovely crew,praise\n")
	jsonl := write("g.jsonl", "\n{\"review\":\"the ferry was late\",\"label\":\"complaint\"}\n{\"review\":\"lovely crew\",\"label\":\"praise\"}\n")
	plain := write("p.csv", "text,label\nthe ferry was late,complaint\nlovely crew,praise\n")
	cases := []struct {
		name, path string
		opt        Options
		want       string // "" for no note
	}{
		{"label by name", guessed, Options{}, `line 1: took the label column "category", chosen by name: give --label-col to choose another`},
		{"text by name in JSON lines", jsonl, Options{}, `line 2: took the text field "review", chosen by name: give --text-col to choose another`},
		{"label named by the option", guessed, Options{LabelCol: "category"}, ""},
		{"default names", plain, Options{}, ""},
	}
	for _, c := range cases {
		_, ws, err := Load(c.path, c.opt)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		var notes []string
		for _, w := range ws {
			if strings.Contains(w.Message, "chosen by name") {
				notes = append(notes, w.String())
			}
		}
		switch {
		case c.want == "" && len(notes) > 0:
			t.Errorf("%s: notes %q, want none", c.name, notes)
		case c.want != "" && (len(notes) != 1 || !strings.HasSuffix(notes[0], c.want)):
			t.Errorf("%s: notes %q, want one ending %q", c.name, notes, c.want)
		}
	}
}

// A held-out file (Options.HeldOut) may hold one label, read by Load, by
// LoadBytes and from a folder alike; every other check stays: no
// examples, an empty label. Without HeldOut one label is refused.
func TestHeldOutOneLabel(t *testing.T) {
	dir := t.TempDir()
	csvPath := writeFile(t, dir, "praise.csv", "text,label\nlovely crew,praise\nthank you,praise\n")
	folder := filepath.Join(dir, "folder")
	writeFile(t, filepath.Join(folder, "praise"), "a.txt", "lovely crew")
	cases := []struct {
		name, path string
		load       func(string, Options) (*Dataset, []Warning, error)
		n          int
		msg        string // "" = read; else the error's substring
	}{
		{"csv", csvPath, Load, 2, ""},
		{"csv from memory", csvPath, loadBytesOf(t), 2, ""},
		{"folder", folder, Load, 1, ""},
		{"header only", writeFile(t, dir, "empty.csv", "text,label\n"), Load, 0, "no examples"},
		{"empty label", writeFile(t, dir, "blank.csv", "text,label\nok,praise\nfine, \n"), Load, 0, "line 3: empty label"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			d, _, err := c.load(c.path, Options{HeldOut: true})
			switch {
			case c.msg != "" && (err == nil || !strings.Contains(err.Error(), c.msg)):
				t.Fatalf("error %v, want one with %q", err, c.msg)
			case c.msg == "" && err != nil:
				t.Fatal(err)
			case c.msg == "" && (len(d.Examples) != c.n || !slices.Equal(d.Labels, []string{"praise"})):
				t.Fatalf("%d examples, labels %q; want %d of praise", len(d.Examples), d.Labels, c.n)
			}
			if c.msg == "" {
				if _, _, err := c.load(c.path, Options{}); err == nil || !strings.Contains(err.Error(), `only one label "praise"`) {
					t.Errorf("without HeldOut: %v, want the one-label error", err)
				}
			}
		})
	}
}

// loadBytesOf reads a file and hands it to LoadBytes.
func loadBytesOf(t *testing.T) func(string, Options) (*Dataset, []Warning, error) {
	return func(path string, opt Options) (*Dataset, []Warning, error) {
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		return LoadBytes(path, b, opt)
	}
}

// TestEmptyLabelHintsAtSwappedColumns: an empty label after labels that
// look like texts (here 60 texts as labels, each its own; more than 50
// distinct and more than half of the examples) says that the text and
// label columns may be swapped, naming both options, in CSV and JSON
// Lines; after 60 examples of two labels, or 40 distinct labels (fewer
// than 51), it does not. A text given as the label column is the common
// cause of an empty label there: an empty text.
func TestEmptyLabelHintsAtSwappedColumns(t *testing.T) {
	const hint = "the columns may be swapped: check that --text-col names the text column and --label-col the label column"
	csvOf := func(n int, label func(i int) string) string {
		var b strings.Builder
		b.WriteString("label,text\n")
		for i := range n {
			fmt.Fprintf(&b, "%s,review %d\n", label(i), i)
		}
		b.WriteString(" ,x\n")
		return b.String()
	}
	jsonlOf := func(n int, label func(i int) string) string {
		var b strings.Builder
		for i := range n {
			fmt.Fprintf(&b, "{\"text\":\"x\",\"label\":\"%s\"}\n", label(i))
		}
		b.WriteString("{\"text\":\"x\",\"label\":\"\"}\n")
		return b.String()
	}
	text := func(i int) string { return fmt.Sprintf("a fine phone number %c%c", 'a'+i%26, 'a'+i/26) }
	two := func(i int) string { return []string{"pos", "neg"}[i%2] }
	intents := func(i int) string { return fmt.Sprintf("intent_%c%c", 'a'+i%26, 'a'+i/26) } // many labels, none a text
	cases := []struct {
		name, file, content string
		line                int
		want                bool
	}{
		{"texts as labels", "a.csv", csvOf(60, text), 62, true},
		{"texts as labels, JSON Lines", "a.jsonl", jsonlOf(60, text), 61, true},
		{"two labels", "a.csv", csvOf(60, two), 62, false},
		{"40 distinct labels", "a.csv", csvOf(40, text), 42, false},
		{"150 intents", "a.csv", csvOf(150, intents), 152, false},
	}
	for _, c := range cases {
		p := writeFile(t, t.TempDir(), c.file, c.content)
		_, _, err := Load(p, Options{TextCol: "text", LabelCol: "label"})
		if err == nil || !errors.Is(err, ErrLabel) || !strings.Contains(err.Error(), fmt.Sprintf("line %d: empty label", c.line)) {
			t.Fatalf("%s: error %v, want an empty label on line %d", c.name, err, c.line)
		}
		if got := strings.Contains(err.Error(), hint); got != c.want {
			t.Errorf("%s: hint %v, want %v: %v", c.name, got, c.want, err)
		}
		// The same from memory (the window's pipes), as LoadBytes reads.
		_, _, err = LoadBytes(c.file, []byte(c.content), Options{TextCol: "text", LabelCol: "label"})
		if err == nil || strings.Contains(err.Error(), hint) != c.want {
			t.Errorf("%s from memory: error %v, want the hint %v", c.name, err, c.want)
		}
	}
}
