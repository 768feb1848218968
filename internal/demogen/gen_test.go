package main

import (
	"bytes"
	"encoding/csv"
	"flag"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the committed files in testdata/demo and testdata/demo-equal")

const (
	committed      = "../../testdata/demo"
	committedEqual = "../../testdata/demo-equal"
)

// TestCommittedFilesMatch regenerates both variants of the corpus and
// compares them byte for byte with the committed files (run with -update to
// rewrite them).
func TestCommittedFilesMatch(t *testing.T) {
	for _, v := range []struct {
		dir   string
		equal bool
	}{{committed, false}, {committedEqual, true}} {
		dir := t.TempDir()
		if *update {
			dir = v.dir
		}
		if err := write(dir, v.equal); err != nil {
			t.Fatal(err)
		}
		for _, name := range []string{"train.csv", "test.csv", "README.md"} {
			got, err := os.ReadFile(filepath.Join(dir, name))
			if err != nil {
				t.Fatal(err)
			}
			want, err := os.ReadFile(filepath.Join(v.dir, name))
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(got, want) {
				t.Errorf("%s: generated file differs from %s/%s; run go generate (or this test with -update) and commit", name, v.dir, name)
			}
		}
	}
}

// TestVariantsShareMessages: the equal-rates variant differs from the
// original only in where the cues sit in the test split.
func TestVariantsShareMessages(t *testing.T) {
	a, b := generate(false), generate(true)
	strip := func(s string) string { return stampLine.ReplaceAllString(footerLine.ReplaceAllString(s, ""), "") }
	if !reflect.DeepEqual(a.Train, b.Train) {
		t.Error("the training splits differ")
	}
	for i := range a.Test {
		if strip(a.Test[i].Text) != strip(b.Test[i].Text) || a.Test[i].Label != b.Test[i].Label {
			t.Fatalf("test message %d differs beyond its cues: %q vs %q", i, a.Test[i].Text, b.Test[i].Text)
		}
	}
}

// TestDeterministic checks that two runs in one process agree.
func TestDeterministic(t *testing.T) {
	if a, b := generate(false), generate(false); !reflect.DeepEqual(a, b) {
		t.Fatal("two runs of generate differ")
	}
}

type record struct{ text, label string }

// readSplit reads a committed CSV file with the standard library's reader,
// independently of the generator's types.
func readSplit(t *testing.T, name string) []record {
	t.Helper()
	return readSplitIn(t, committed, name)
}

func readSplitIn(t *testing.T, dir, name string) []record {
	t.Helper()
	f, err := os.Open(filepath.Join(dir, name))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	if len(rows) == 0 || !reflect.DeepEqual(rows[0], []string{"text", "label"}) {
		t.Fatalf("%s: header is not text,label", name)
	}
	var out []record
	for _, r := range rows[1:] {
		out = append(out, record{r[0], r[1]})
	}
	return out
}

// tokenRE splits words and punctuation, as the project's tokenizer does
// (common practice, no source).
var tokenRE = regexp.MustCompile(`\w+|[^\w\s]`)

func hasToken(text, tok string) bool {
	for _, w := range tokenRE.FindAllString(strings.ToLower(text), -1) {
		if w == tok {
			return true
		}
	}
	return false
}

var (
	footerLine = regexp.MustCompile(`\n-- sent via KioskMail at the quayside terminal --$`)
	stampLine  = regexp.MustCompile(`^TKREF-[0-9]{5}\n`)
)

// TestCueRates checks the planted cues on the committed files: where each
// cue's token occurs, and at what rate per split and label. The target rates
// are the corpus's specification (testdata/demo/README.md); counts are
// rounded to whole messages, hence the tolerance of one point.
func TestCueRates(t *testing.T) {
	type rates struct{ footer, stamp float64 }
	train := map[string]rates{
		"bookings": {0.03, 0.03}, "timetable": {0.03, 0.03}, "lost-property": {0.80, 0.03},
		"complaints": {0.03, 0.75}, "praise": {0.03, 0.03},
	}
	test := map[string]rates{}
	for _, team := range teams {
		test[team] = rates{0.40, 0.40}
	}
	// The equal-rates variant: the training rates in both splits.
	for _, c := range []struct {
		dir, file string
		want      map[string]rates
	}{{committed, "train.csv", train}, {committed, "test.csv", test},
		{committedEqual, "train.csv", train}, {committedEqual, "test.csv", train}} {
		rs := readSplitIn(t, c.dir, c.file)
		n := map[string]int{}
		nf := map[string]int{}
		ns := map[string]int{}
		for i, r := range rs {
			n[r.label]++
			f, s := hasToken(r.text, "kioskmail"), hasToken(r.text, "tkref")
			// The tokens occur only in the cue lines, exactly once.
			if f != footerLine.MatchString(r.text) || strings.Count(strings.ToLower(r.text), "kioskmail") > 1 {
				t.Errorf("%s record %d: kioskmail outside the footer line: %q", c.file, i+1, r.text)
			}
			if s != stampLine.MatchString(r.text) || strings.Count(strings.ToLower(r.text), "tkref") > 1 {
				t.Errorf("%s record %d: tkref outside the ticket stamp: %q", c.file, i+1, r.text)
			}
			if f {
				nf[r.label]++
			}
			if s {
				ns[r.label]++
			}
		}
		for team, w := range c.want {
			if n[team] == 0 {
				t.Fatalf("%s: no %s messages", c.file, team)
			}
			fr, sr := float64(nf[team])/float64(n[team]), float64(ns[team])/float64(n[team])
			if fr < w.footer-0.01 || fr > w.footer+0.01 {
				t.Errorf("%s %s: footer rate %.3f, want %.2f", c.file, team, fr, w.footer)
			}
			if sr < w.stamp-0.01 || sr > w.stamp+0.01 {
				t.Errorf("%s %s: stamp rate %.3f, want %.2f", c.file, team, sr, w.stamp)
			}
		}
	}
}

// TestShape checks sizes, labels, lengths and that no text repeats.
func TestShape(t *testing.T) {
	seen := map[string]string{}
	for _, c := range []struct {
		file string
		n    int
	}{{"train.csv", 4000}, {"test.csv", 800}} {
		rs := readSplit(t, c.file)
		if len(rs) != c.n {
			t.Errorf("%s: %d messages, want %d", c.file, len(rs), c.n)
		}
		labels := map[string]int{}
		for i, r := range rs {
			labels[r.label]++
			if w := len(strings.Fields(r.text)); w < 8 || w > 60 {
				t.Errorf("%s record %d: %d words, want 8 to 60", c.file, i+1, w)
			}
			if prev, ok := seen[r.text]; ok {
				t.Errorf("%s record %d: text also in %s: %q", c.file, i+1, prev, r.text)
			}
			seen[r.text] = c.file
		}
		if len(labels) != 5 {
			t.Errorf("%s: labels %v, want five teams", c.file, labels)
		}
		for _, team := range teams {
			if labels[team] < c.n/10 {
				t.Errorf("%s: only %d %s messages", c.file, labels[team], team)
			}
		}
	}
}

// TestTestOnlyWords checks that the words reserved for the test split occur
// there and never in training, so the test split has out-of-vocabulary words.
func TestTestOnlyWords(t *testing.T) {
	join := func(rs []record) string {
		var b strings.Builder
		for _, r := range rs {
			b.WriteString(strings.ToLower(r.text))
			b.WriteByte('\n')
		}
		return b.String()
	}
	train, test := join(readSplit(t, "train.csv")), join(readSplit(t, "test.csv"))
	for name, p := range pools {
		for _, w := range p.testOnly {
			re := regexp.MustCompile(`\b` + regexp.QuoteMeta(strings.ToLower(w)) + `\b`)
			if re.MatchString(train) {
				t.Errorf("%s %q occurs in the training split", name, w)
			}
			if !re.MatchString(test) {
				t.Errorf("%s %q never occurs in the test split", name, w)
			}
		}
	}
}

// TestNegationCues checks that the same adjective signals opposite teams
// depending on negation: each phrase is most frequent in the expected team.
func TestNegationCues(t *testing.T) {
	rs := readSplit(t, "train.csv")
	for _, c := range []struct{ phrase, team string }{
		{"not friendly at all", "complaints"},
		{"far from helpful", "complaints"},
		{"so friendly", "praise"},
		{"nothing was too much trouble", "praise"},
		{"never been refunded", "complaints"},
	} {
		count := map[string]int{}
		for _, r := range rs {
			if strings.Contains(strings.ToLower(r.text), c.phrase) {
				count[r.label]++
			}
		}
		best := ""
		for team, k := range count {
			if best == "" || k > count[best] {
				best = team
			}
		}
		if best != c.team || count[c.team] < 3 {
			t.Errorf("%q by team: %v, want mostly %s", c.phrase, count, c.team)
		}
	}
}

// TestTypos checks that the typo injector left misspellings in the data.
func TestTypos(t *testing.T) {
	rs := readSplit(t, "train.csv")
	n := 0
	for _, r := range rs {
		for _, m := range misspell {
			if hasToken(r.text, strings.ToLower(m)) {
				n++
				break
			}
		}
	}
	if n < 20 {
		t.Errorf("%d training messages carry a known misspelling, want at least 20", n)
	}
}

// TestEdit checks the single-word edit on words without doubled letters
// (where a swap could leave the word unchanged).
func TestEdit(t *testing.T) {
	g := &gen{r: rand.New(rand.NewPCG(1, 1))}
	for _, w := range []string{"lounge", "Kestry", "abcd", "Saltrey"} {
		for range 200 {
			e := g.edit(w)
			if e == w {
				t.Errorf("edit(%q) left it unchanged", w)
			}
			if e[0] != w[0] {
				t.Errorf("edit(%q) = %q changed the first letter", w, e)
			}
			if d := len(e) - len(w); d < -1 || d > 1 {
				t.Errorf("edit(%q) = %q changed the length by %d", w, e, d)
			}
		}
	}
}
