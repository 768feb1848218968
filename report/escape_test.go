package report

import (
	"bytes"
	"context"
	"encoding/base64"
	"encoding/xml"
	"errors"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
)

// hostileText holds markup, both kinds of quotes and an ampersand.
const hostileText = `Refund <script>alert(1)</script> for "Ann" & 'Bo' <b>now</b>`

// hostileExample explains hostileText with the fixture's model.
func hostileExample(t *testing.T, m *cnn.Model) Example {
	t.Helper()
	return exampleOf(t, m, hostileText)
}

// exampleOf explains text with m, an example of the first label.
func exampleOf(t *testing.T, m *cnn.Model, text string) Example {
	t.Helper()
	tok, err := corpus.NewTokenizer(m.Tokenizer)
	if err != nil {
		t.Fatal(err)
	}
	v := corpus.NewVocab(m.Vocab, nil)
	toks := tok.TokenizeFor(v, text)
	e, err := explain.Explain(m, toks, v.Encode(toks), explain.ExplainOptions{Occlusion: true})
	if err != nil {
		t.Fatal(err)
	}
	kind := KindWrong
	if e.Class == 0 {
		kind = KindCorrect
	}
	return Example{Kind: kind, Text: text, Gold: m.Labels[0], Note: `line "7" <i>&</i>`, Explanation: e}
}

// screenshotInput is the demo fixture's input with a hostile example added,
// or, when $TELLTALE_REPORT_MODEL names a model file, a report of that model
// on the demo corpus: the training split of train.csv the model records (all
// of it when it records none) and test.csv (for scripts/report-screenshot.sh).
func screenshotInput(t *testing.T) Input {
	t.Helper()
	if path := os.Getenv("TELLTALE_REPORT_MODEL"); path != "" {
		m, err := cnn.Load(path)
		if err != nil {
			t.Fatal(err)
		}
		root := repoRoot()
		train, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "train.csv"), corpus.Options{})
		if err != nil {
			t.Fatal(err)
		}
		// As telltale report does: the training split the model file records,
		// so the page shows the figures the command prints.
		if rec := m.Info.Splits; rec != nil && rec.Examples == len(train.Examples) && rec.Fingerprint == train.Fingerprint() {
			train, _, _ = train.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
		}
		test, _, err := corpus.Load(filepath.Join(root, "testdata", "demo", "test.csv"), corpus.Options{})
		if err != nil {
			t.Fatal(err)
		}
		in, err := Gather(context.Background(), m, train, test, Options{Title: "Brindlewick Ferries help desk: demo model", ModelPath: filepath.Base(path)}, nil)
		if err != nil {
			t.Fatal(err)
		}
		return in
	}
	d := loadDemo(t)
	in := d.input
	in.Examples = append(append([]Example(nil), in.Examples...), hostileExample(t, d.model))
	return in
}

// TestEscaping feeds markup, quotes and ampersands through every kind of
// text the report shows (labels, words, file paths, duplicate texts,
// example texts, notes, the title) and checks the exact escaped bytes that
// html/template writes; no raw tag from the data may survive. The SVG plots,
// which carry the labels too, must parse as XML (Go's encoding/xml) and hold
// the label as escaped text.
func TestEscaping(t *testing.T) {
	d := loadDemo(t)
	in := d.input
	m := d.model.Clone()
	badLabel := `<script>alert("x")</script>&co`
	m.Labels = append([]string(nil), m.Labels...)
	m.Labels[0] = badLabel
	in.Model = m
	mt := *in.Metrics
	mt.Labels = append([]string(nil), mt.Labels...)
	mt.Labels[0] = badLabel
	mt.PerClass = append([]cnn.ClassMetrics(nil), mt.PerClass...)
	mt.PerClass[0].Label = badLabel
	in.Metrics = &mt
	sum := *in.Summary
	sum.Splits = append([]corpus.SplitSummary(nil), sum.Splits...)
	sum.Splits[0].Path = `/data/<img src=x onerror=alert(1)>.csv`
	sum.ExactDuplicates = []corpus.DuplicateGroup{{Text: hostileText,
		Members: []corpus.Location{{Split: "train", Line: 3, Label: "<u>x</u>"}, {Split: "test", Line: 9, Label: "y"}}, CrossSplit: true}}
	in.Summary = &sum
	in.Title = `Report <script>alert(2)</script> & "more"`
	in.ModelPath = `m"odel<x>.bin`
	in.Notes = []string{`note <script>alert(3)</script>`}
	in.Examples = []Example{hostileExample(t, m)}
	// A cue's words and form come from the data too.
	if in.Audit == nil || len(in.Audit.Ranked) == 0 {
		t.Fatal("the fixture's audit lists no cue")
	}
	a := *in.Audit
	a.Ranked = slices.Clone(a.Ranked)
	a.Ranked[0].Surface, a.Ranked[0].Text = `<script>alert(4)</script>`, `"><img src=x>`
	in.Audit = &a
	r, err := New(in)
	if err != nil {
		t.Fatal(err)
	}
	out := render(t, r)

	if strings.Contains(strings.ToLower(out), "<script") {
		t.Error("a raw <script tag from the data reached the page")
	}
	for _, bad := range []string{"<b>now</b>", "<i>&</i>", "<img src=x", "<u>x</u>", `m"odel`} {
		if strings.Contains(out, bad) {
			t.Errorf("raw %q in the page", bad)
		}
	}
	// html/template's text escaping: < → &lt;, > → &gt;, & → &amp;,
	// " → &#34;, ' → &#39;, + → &#43; (its escaper table).
	want := []string{
		`<title>Report &lt;script&gt;alert(2)&lt;/script&gt; &amp; &#34;more&#34;</title>`,
		`model <code>m&#34;odel&lt;x&gt;.bin</code>`,
		`<td>Refund &lt;script&gt;alert(1)&lt;/script&gt; for &#34;Ann&#34; &amp; &#39;Bo&#39; &lt;b&gt;now&lt;/b&gt;</td>`,
		`/data/&lt;img src=x onerror=alert(1)&gt;.csv`,
		`train line 3 (&lt;u&gt;x&lt;/u&gt;)`,
		`<td>&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt;&amp;co</td>`,
		`<li>note &lt;script&gt;alert(3)&lt;/script&gt;</li>`,
		// a cue's form and words
		`&#39;&lt;script&gt;alert(4)&lt;/script&gt;&#39; → `,
		`<code>&#34;&gt;&lt;img src=x&gt;</code>`,
		`line &#34;7&#34; &lt;i&gt;&amp;&lt;/i&gt;`,
		// a painted token with its signed value in the title attribute
		`title="script: `,
		// the gap text between painted tokens
		`&lt;`,
	}
	for _, w := range want {
		if !strings.Contains(out, w) {
			t.Errorf("escaped form %q missing", w)
		}
	}
	// The painted example must give back the original text, character for
	// character, once tags are dropped and entities decoded.
	m1 := regexp.MustCompile(`(?s)<div class="painted">(.*?)</div>`).FindStringSubmatch(out)
	if m1 == nil {
		t.Fatal("no painted text")
	}
	plain := htmlText(regexp.MustCompile(`<[^>]*>`).ReplaceAllString(m1[1], ""))
	if plain != hostileText {
		t.Errorf("painted text reads %q, want %q", plain, hostileText)
	}
	// Plots: well-formed XML holding the escaped label.
	imgs := regexp.MustCompile(`src="(data:image/svg[^"]+)"`).FindAllStringSubmatch(out, -1)
	if len(imgs) != 2 {
		t.Fatalf("%d SVG images, want 2", len(imgs))
	}
	for _, im := range imgs {
		b64, ok := strings.CutPrefix(htmlText(im[1]), "data:image/svg+xml;base64,")
		if !ok {
			t.Fatalf("image URL %.40q is not base64 SVG", im[1])
		}
		svg, err := base64.StdEncoding.DecodeString(b64)
		if err != nil {
			t.Fatal(err)
		}
		dec := xml.NewDecoder(bytes.NewReader(svg))
		dec.Strict = true
		var texts []string
		for {
			tk, err := dec.Token()
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatalf("SVG is not well-formed XML: %v", err)
			}
			if cd, ok := tk.(xml.CharData); ok {
				texts = append(texts, string(cd))
			}
		}
		if !strings.Contains(string(svg), "<svg") {
			t.Error("image is not SVG")
		}
		if strings.Contains(string(svg), "Confusion") && !strings.Contains(strings.Join(texts, "\n"), badLabel) {
			t.Errorf("confusion plot does not show the label %q as text", badLabel)
		}
		if strings.Contains(string(svg), "<script") {
			t.Error("raw <script in an SVG plot")
		}
	}
}

func htmlText(s string) string {
	r := strings.NewReplacer("&lt;", "<", "&gt;", ">", "&#34;", `"`, "&#39;", "'", "&#43;", "+", "&amp;", "&")
	return r.Replace(s)
}
