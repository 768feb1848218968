package audit

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"strings"

	"telltale/cnn"
	"telltale/explain"
)

// Options controls Run. Zero values select the defaults noted.
type Options struct {
	// Test is TestFisher (default) or TestBinomial; Correction is CorrectBH
	// (default) or CorrectBonferroni, over every word × class tested; Alpha
	// is the level of the correction (default 0.01); MinSupport the fewest
	// training texts a word or cue must occur in to be tested (default 5).
	Test       string
	Correction string
	Alpha      float64
	MinSupport int
	// Agreement is the least share of a word's occurrences its phrase must
	// keep while it grows (default 0.8); MaxSeeds bounds the associated
	// words grown into phrases (default 300).
	Agreement float64
	MaxSeeds  int
	// Measured bounds the cues whose reliance is measured (default 40: the
	// most associated half and the most artifact-like half of them, and
	// every marked artifact).
	Measured int
	// Draws is the number of seeded edits per text (default 3); MaxTexts
	// the most texts edited per cue and half (default 200); Bootstrap the
	// resamples of every interval (default 1000); RelianceAlpha the level
	// of the reliance tests, Benjamini–Hochberg over the cues measured
	// (default 0.05).
	Draws         int
	MaxTexts      int
	Bootstrap     int
	RelianceAlpha float64
	// MaxHeldout bounds the held-out texts used (a seeded, stratified
	// sample; default 20,000), which bounds memory; MinHalf is the fewest
	// texts each half must have (default 30).
	MaxHeldout int
	MinHalf    int
	// Top is the number of cues listed in each list, besides the marked
	// ones, which are always listed (default 15);
	// Examples the quoted texts per cue (default 2).
	Top      int
	Examples int
	// Marks are a person's verdicts (nil: none).
	Marks *Marks
	// ModelFile, TrainFile and HeldoutFile name the files the audit read
	// (the Result keeps them).
	ModelFile, TrainFile, HeldoutFile string
	// HeldoutShare says the held-out texts are a share held out of the
	// data the model was trained on (its test split), not a file of their
	// own: a message on too few held-out texts then says to hold out a
	// larger share.
	HeldoutShare bool
	// RetrainCommands renders the command lines, for a POSIX shell and
	// runnable as they are, that take the cues out of the training text by
	// their patterns (Action.Patterns) and train the model's recipe again
	// on its own splits. Nil: the story lists the patterns and says what to
	// do in words.
	RetrainCommands func(patterns []string) []string
	// RetrainedModel is the file the caller writes the model retrained
	// without the cues to (telltale audit --retrain-out), "" for none: the
	// story then names it for the comparison and suggests no command that
	// trains into a file (it would replace that one).
	RetrainedModel string
	// Seed seeds the halves, the edits and the bootstrap.
	Seed uint64
	// Workers is the number of goroutines (0: GOMAXPROCS); TableBytes
	// bounds the slot table (0: explain.DefaultTableBytes).
	Workers    int
	TableBytes int64
}

func (o *Options) defaults() {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	deff := func(v *float64, d float64) {
		if *v <= 0 || *v >= 1 {
			*v = d
		}
	}
	if o.Test == "" {
		o.Test = TestFisher
	}
	if o.Correction == "" {
		o.Correction = CorrectBH
	}
	deff(&o.Alpha, 0.01)
	def(&o.MinSupport, 5)
	deff(&o.Agreement, 0.8)
	def(&o.MaxSeeds, 300)
	def(&o.Measured, 40)
	def(&o.Draws, 3)
	def(&o.MaxTexts, 200)
	def(&o.Bootstrap, 1000)
	deff(&o.RelianceAlpha, 0.05)
	def(&o.MaxHeldout, 20000)
	def(&o.MinHalf, 30)
	def(&o.Top, 15)
	def(&o.Examples, 2)
	if o.Workers <= 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
}

// check reports an option that cannot be used.
func (o *Options) check() error {
	if o.Test != TestFisher && o.Test != TestBinomial {
		return inputErrorf("audit: test %q: use %s or %s", o.Test, TestFisher, TestBinomial)
	}
	if o.Correction != CorrectBH && o.Correction != CorrectBonferroni {
		return inputErrorf("audit: correction %q: use %s or %s", o.Correction, CorrectBH, CorrectBonferroni)
	}
	return nil
}

// Progress is called during Run with the stage ("association", "phrases",
// "held-out", "reliance", "confirmation", "action"), the items done and
// the total. It may be called from several goroutines.
type Progress func(stage string, done, total int)

// The verdicts of a cue (Candidate.Verdict).
const (
	// VerdictActed: artifact-like, the model relies on it on the selection
	// half, and the confirmation half confirms it, where replacing it
	// changes predictions beyond the control: the action removes it.
	VerdictActed = "acted-on"
	// VerdictUnconfirmed: artifact-like and relied on in the selection
	// half, but the confirmation half does not confirm that replacing it
	// lowers its label's probability and changes predictions.
	VerdictUnconfirmed = "unconfirmed"
	// VerdictNotRelied: artifact-like but the model does not measurably
	// rely on it.
	VerdictNotRelied = "not-relied-on"
	// VerdictTask: reads like the task (or marked task) and relied on in
	// the selection half: listed apart for a person to judge, never acted
	// on, when the confirmation half confirms the reliance (Relied) or a
	// person marked it.
	VerdictTask = "reads-like-the-task"
	// VerdictOther: associated with a label, not artifact-like, not
	// measurably relied on.
	VerdictOther = "other"
	// VerdictUnmeasured: associated, but too rare in the held-out split to
	// measure (or beyond Options.Measured).
	VerdictUnmeasured = "not-measured"
)

// Candidate is a cue: a word or a phrase that predicts a label in the
// training split, with the evidence of the three questions.
type Candidate struct {
	// Words are the cue's words as the model reads them (NumberWord for any
	// number), Text the same joined by spaces (how marks name it), Surface
	// its most common form in the original text.
	Words   []string `json:"words"`
	Text    string   `json:"text"`
	Surface string   `json:"surface,omitempty"`
	// Label is the label it predicts; Seeds the associated words it grew
	// from (empty for a cue only a mark names).
	Label string   `json:"label"`
	Class int      `json:"class"`
	Seeds []string `json:"grown_from,omitempty"`
	// Position is "start" or "end" when the cue sits at that edge of most
	// of its training texts, else "".
	Position string `json:"position,omitempty"`
	// Association is question 1, on the training split.
	Association CueAssociation `json:"association"`
	// ArtifactLikeness (question 3, ArtifactFormula) and its signals, as
	// measured: a mark changes the cue's weight in the ranking
	// (artifactWeight), never this figure.
	ArtifactLikeness float64  `json:"artifact_likeness"`
	Signals          []Signal `json:"signals"`
	// Reliance is question 2 on the selection half (it ranks the cue);
	// Confirmed the same on the confirmation half (every figure a person
	// reads about a listed cue comes from there).
	Reliance  *Reliance `json:"reliance_selection,omitempty"`
	Confirmed *Reliance `json:"reliance,omitempty"`
	// RelianceQ is the Benjamini–Hochberg adjusted p-value of the
	// selection half's sign test over the cues measured.
	RelianceQ float64 `json:"reliance_q"`
	// ConfirmedQ is the same of the confirmation half's sign test, over
	// the cues of its list put to the test there (the artifact-like cues
	// relied on in the selection half; the cues that read like the task);
	// Relied says the confirmation half confirms the model relies on the
	// cue (acted on, or listed as relied on and reading like the task).
	ConfirmedQ float64 `json:"reliance_confirmed_q,omitempty"`
	Relied     bool    `json:"relied_confirmed"`
	// ConfidenceOnly marks an artifact-like cue put to the test whose
	// label's probability drop the confirmation half confirms (its sign
	// test, ConfirmedQ at most Options.RelianceAlpha, the drop's interval
	// above 0 and a mean drop of at least minConfidenceDrop) but whose
	// flips it does not (Reliance.FlipsConfirmed): the model's confidence
	// rests on it there though its predictions did not measurably change.
	// It is not acted on (VerdictUnconfirmed); NotRuledOut says what the
	// flips' interval leaves open.
	ConfidenceOnly bool `json:"confidence_only,omitempty"`
	// Shift is question 4: the cue's label share in the selection half of
	// the held-out split (a reason the cue is chosen); ShiftConfirmed the
	// same on the confirmation half, which took no part in choosing it:
	// the figure shown of a shift (ConfirmedShiftSays). It is set only for
	// a cue in the family of its Holm correction (confirmedShifts): put to
	// the test on the confirmation half, its selection half showing a
	// shift, and held by some confirming text; nil for every other cue, so
	// that no uncorrected one-sided test is reported beside the corrected
	// ones.
	Shift          *Shift          `json:"shift,omitempty"`
	ShiftConfirmed *ConfirmedShift `json:"shift_confirmed,omitempty"`
	// Filters keyed on it, with their ablation.
	Filters *Filters `json:"filters,omitempty"`
	// Score = LabelDrop (selection half, at least 0) × ArtifactLikeness.
	Score   float64 `json:"score"`
	Mark    string  `json:"mark,omitempty"`
	Verdict string  `json:"verdict"`
	// Pattern takes the cue out of raw text (corpus.MaskTokens).
	Pattern string `json:"pattern"`

	phrase   phrase
	trainOcc []span
	selOcc   []span
	confOcc  []span
}

// CueAssociation is a cue's association with its label in the training
// split, by texts.
type CueAssociation struct {
	Texts    int     `json:"texts"`
	InLabel  int     `json:"in_label"`
	Share    float64 `json:"share"`
	PerClass []int   `json:"per_class"`
	// P is the exact one-sided p-value (Result.Test) of the cue's texts in
	// its label; Adjusted the same corrected over every word × class
	// tested (Result.Correction).
	P        float64 `json:"p"`
	Adjusted float64 `json:"adjusted_p"`
}

// Shift compares a cue's label share in the selection half of the
// held-out split with training (the confirmation half takes no part: it
// decides the verdict). HeldoutTexts are the selection half's texts
// holding the cue, HeldoutShare the share of them in its label.
type Shift struct {
	HeldoutTexts int     `json:"heldout_texts"`
	HeldoutShare float64 `json:"heldout_share"`
	TrainShare   float64 `json:"train_share"`
	// P is the two-sided Fisher exact test of the 2×2 table split × (in
	// the cue's label or not) over the texts holding it (1 when none);
	// Q is P corrected by Benjamini–Hochberg over every candidate whose
	// shift is tested (those in the selection half).
	P float64 `json:"p"`
	Q float64 `json:"q"`
	// Present: Q < 0.01 and the held-out share is lower.
	Present bool `json:"present"`
}

// ConfirmedShift is a cue's label share among the confirmation half's
// texts holding it, against training: the figure a person reads of the
// shift of a cue acted on, since the selection half's (Shift) took part
// in choosing the cue and, chosen for its extreme share, tends to come out
// lower than it is (regression to the mean).
type ConfirmedShift struct {
	// Texts are the confirmation half's texts holding the cue, InLabel
	// those of them in its label; Share is InLabel/Texts with its exact
	// 95% Clopper–Pearson interval; TrainShare the training split's share.
	Texts      int      `json:"texts"`
	InLabel    int      `json:"in_label"`
	Share      Interval `json:"share"`
	TrainShare float64  `json:"train_share"`
	// P is the one-sided Fisher exact test that the share is lower than in
	// training (the 2×2 table split × (in the cue's label or not) over the
	// texts holding it). The training share took part in choosing the cue
	// (an extreme share among many candidates), so it tends to overstate
	// the share of the data training was drawn from, and the test leans
	// towards finding the confirming share lower by that much: a shift far
	// beyond chance stands, a borderline one is weak evidence.
	P float64 `json:"p_lower"`
	// Holm is P adjusted by Holm's step-down method over the Family cues
	// put to the test on the confirmation half whose selection half shows
	// a shift (Shift.Present): a family fixed before the confirmation half
	// is read, which holds every such cue acted on. Family is its size
	// (only a cue in it has a ConfirmedShift). Lower: Holm ≤ 0.05 and the
	// share lower.
	Holm   float64 `json:"holm_p"`
	Family int     `json:"holm_family"`
	Lower  bool    `json:"lower"`
}

// Result is the audit of one model.
type Result struct {
	Labels            []string `json:"labels"`
	TrainTexts        int      `json:"train_texts"`
	HeldoutTexts      int      `json:"heldout_texts"`
	SelectionTexts    int      `json:"selection_texts"`
	ConfirmationTexts int      `json:"confirmation_texts"`
	// Test, Correction, Alpha, Tests and Cutoff describe question 1: Tests
	// word × class tests, corrected; a cue passes when its p ≤ Cutoff.
	Test       string  `json:"test"`
	Correction string  `json:"correction"`
	Alpha      float64 `json:"alpha"`
	Tests      int     `json:"tests"`
	Cutoff     float64 `json:"cutoff"`
	MinSupport int     `json:"min_support"`
	// Associated is how many cues pass the gate; Measured how many had
	// their reliance measured.
	Associated int `json:"associated"`
	Measured   int `json:"measured"`
	// Ranked are the artifact-like cues (artifact-likeness ≥
	// ArtifactThreshold, or marked artifact): those acted on first, then
	// those relied on in the selection half only, then the rest, each
	// group by Score (ScoreFormula).
	Ranked []Candidate `json:"ranked"`
	// Task are the cues the model relies on that read like the task (or
	// are marked task), most relied on first.
	Task []Candidate `json:"relied_on_reads_like_the_task"`
	// Others are the remaining associated cues, most associated first.
	// Each list holds its first Options.Top cues and every marked cue.
	Others []Candidate `json:"others,omitempty"`
	// Action is what to do; its cues are the Ranked ones acted on.
	Action          Action `json:"action"`
	ArtifactFormula string `json:"artifact_formula"`
	ScoreFormula    string `json:"score_formula"`
	ModelFile       string `json:"model_file,omitempty"`
	TrainFile       string `json:"train_file,omitempty"`
	HeldoutFile     string `json:"heldout_file,omitempty"`
	// Selection and Confirmation are the indexes of the held-out texts in
	// each half (the confirmation half is the counterfactual split's).
	Selection    []int `json:"-"`
	Confirmation []int `json:"-"`
}

// ScoreFormula states how a cue is ranked.
const ScoreFormula = "score = reliance × artifact-likeness (1 for a cue marked artifact), for cues that pass the association gate; reliance is the " +
	"mean drop of the probability of the cue's label when the cue is replaced by label-neutral words, " +
	"less the drop when the same words are put elsewhere (selection half, at least 0); the cues acted on are listed " +
	"first, then those relied on only in the selection half, then the rest"

// auditor holds what Run computes along the way.
type auditor struct {
	m        *cnn.Model
	opt      Options
	train    Data
	sel      Data
	conf     Data
	vocab    []string
	labels   []string
	assoc    *association
	st       *explain.SlotTable
	selIdx   []int
	confIdx  []int
	selBase  *basePass
	confBase *basePass
	neutral  []int32
	// wordCount counts each word id in the training split (cueWords).
	wordCount []int
	progress  Progress
}

// Run audits model m: train is the split it was trained on, heldout a
// split it was not trained on (the dev or test split, shifted or not).
// Nothing is written. Progress may be nil; Run returns ctx.Err() when
// cancelled.
//
// The held-out split is divided once, stratified by label and seeded, into
// a selection half, on which the cues are ranked, chosen and their filters
// found, and a confirmation half, on which every reliance figure shown,
// the accuracy without the cues and the test of a filter mask are measured:
// so every printed p-value and interval is valid for what it describes.
func Run(ctx context.Context, m *cnn.Model, train, heldout Data, opt Options, progress Progress) (*Result, error) {
	opt.defaults()
	if err := opt.check(); err != nil {
		return nil, err
	}
	if progress == nil {
		progress = func(string, int, int) {}
	}
	if err := m.Config.Validate(); err != nil {
		return nil, fmt.Errorf("audit: %w", err)
	}
	if len(m.Vocab) != m.Config.VocabSize {
		return nil, inputErrorf("audit: the model holds %d vocabulary words for %d embedding rows: the audit needs its words; retrain it with telltale train",
			len(m.Vocab), m.Config.VocabSize)
	}
	if err := train.check(m, "training"); err != nil {
		return nil, err
	}
	if err := heldout.check(m, "test"); err != nil {
		return nil, err
	}
	if err := heldout.checkTwoLabels(m.Labels); err != nil {
		return nil, err
	}
	if train.Len() < 2*opt.MinSupport {
		return nil, inputErrorf("audit: the %s has %d texts: too few for a test of association (at least %d)",
			train.name("training"), train.Len(), 2*opt.MinSupport)
	}
	a := &auditor{m: m, opt: opt, train: train, vocab: m.Vocab, labels: m.Labels, progress: progress}
	if err := a.halves(heldout); err != nil {
		return nil, err
	}
	progress("association", 0, 1)
	a.assoc = associate(train, m.Config.Classes, m.Config.VocabSize, opt.Test, opt.Correction, opt.Alpha, opt.MinSupport)
	progress("association", 1, 1)
	cands, err := a.candidates(ctx)
	if err != nil {
		return nil, err
	}
	if err := a.heldoutPasses(ctx, cands); err != nil {
		return nil, err
	}
	measured, err := a.measure(ctx, cands)
	if err != nil {
		return nil, err
	}
	res := a.result(cands, measured)
	if err := a.confirm(ctx, res); err != nil {
		return nil, err
	}
	if err := a.act(ctx, res); err != nil {
		return nil, err
	}
	return res, nil
}

// halves samples the held-out split to at most MaxHeldout texts and
// divides it into the selection and confirmation halves, stratified by
// label.
func (a *auditor) halves(heldout Data) error {
	r := rand.New(rand.NewPCG(a.opt.Seed, 0x5eed))
	byClass := make([][]int, a.m.Config.Classes)
	for i, g := range heldout.Gold {
		byClass[g] = append(byClass[g], i)
	}
	keep := float64(min(heldout.Len(), a.opt.MaxHeldout)) / float64(max(1, heldout.Len()))
	var sel, conf []int
	for _, idx := range byClass {
		r.Shuffle(len(idx), func(x, y int) { idx[x], idx[y] = idx[y], idx[x] })
		idx = idx[:int(float64(len(idx))*keep+0.5)]
		h := len(idx) / 2
		if len(idx)%2 == 1 && r.IntN(2) == 0 {
			h++
		}
		sel = append(sel, idx[:h]...)
		conf = append(conf, idx[h:]...)
	}
	slices.Sort(sel)
	slices.Sort(conf)
	if len(sel) < a.opt.MinHalf || len(conf) < a.opt.MinHalf {
		fix := "give a larger test file (--test FILE)"
		if a.opt.HeldoutShare {
			fix = "hold out a larger share of the data as the test split (train the model again with a larger --test-frac), " +
				"or give a larger test file (--test FILE)"
		}
		return inputErrorf("audit: the %s has %d texts: too few for the tests, which need %d in each of its two halves; %s",
			heldout.name("test"), heldout.Len(), a.opt.MinHalf, fix)
	}
	a.sel, a.conf = heldout.subset(sel), heldout.subset(conf)
	a.selIdx, a.confIdx = sel, conf
	return nil
}

// phraseSet collects distinct phrases with the words they grew from.
type phraseSet struct {
	phrases []phrase
	from    map[string][]string
	index   map[string]int
}

func (ps *phraseSet) add(p phrase, seed string) {
	k := p.key()
	if _, ok := ps.index[k]; !ok {
		ps.index[k] = len(ps.phrases)
		ps.phrases = append(ps.phrases, p)
	}
	if seed != "" && !slices.Contains(ps.from[k], seed) {
		ps.from[k] = append(ps.from[k], seed)
	}
}

// candidates grows the associated words into phrases, adds the marked
// cues, finds their training occurrences and keeps those that pass the
// association gate, with their artifact signals.
func (a *auditor) candidates(ctx context.Context) ([]*Candidate, error) {
	a.progress("phrases", 0, 1)
	ps := &phraseSet{from: map[string][]string{}, index: map[string]int{}}
	if err := a.grownPhrases(ctx, ps); err != nil {
		return nil, err
	}
	if err := a.markedPhrases(ps); err != nil {
		return nil, err
	}
	occs := newMatcher(ps.phrases, a.vocab).occurrences(a.train)
	a.progress("phrases", 1, 1)
	var out []*Candidate
	for k, p := range ps.phrases {
		if c := a.candidate(p, ps.from[p.key()], occs[k]); c != nil {
			out = append(out, c)
		}
	}
	return out, nil
}

// majority is the share of a word's occurrences its written form must keep
// (grownPhrases).
const majority = 0.5

// grownPhrases grows the associated words, most associated first (at most
// MaxSeeds), into phrases; a square bracket into the bracketed groups it
// opens or closes.
func (a *auditor) grownPhrases(ctx context.Context, ps *phraseSet) error {
	var seeds []int32
	seen := map[int32]bool{}
	for _, w := range a.assoc.significant {
		if !seen[w.id] && len(seeds) < a.opt.MaxSeeds {
			seen[w.id] = true
			seeds = append(seeds, w.id)
		}
	}
	const maxSamples = 3000
	occ := make(map[int32][]span, len(seeds))
	for i, text := range a.train.IDs {
		for j, id := range text {
			if seen[id] && len(occ[id]) < maxSamples {
				occ[id] = append(occ[id], span{int32(i), int32(j), int32(j + 1)})
			}
		}
	}
	for n, id := range seeds {
		if n%32 == 0 {
			if err := ctx.Err(); err != nil {
				return err
			}
		}
		if w := a.vocab[id]; w == "[" || w == "]" {
			if groups := bracketGroups(a.train, a.vocab, occ[id], a.opt.MinSupport); len(groups) > 0 {
				for _, g := range groups {
					ps.add(g, w)
				}
				continue
			}
		}
		p := grow(a.train, a.vocab, id, occ[id], growOptions{agreement: a.opt.Agreement, maxLen: 40})
		ps.add(p, a.vocab[id])
		// A word that keeps no phrase in Agreement of its occurrences but
		// is written together with marks in most of them ("re" of "Re:",
		// whose other occurrences are "you're") yields that written form
		// too: the matcher gives it those occurrences, and the word the
		// rest.
		if len(p) == 1 && a.train.Tokens != nil {
			if q := grow(a.train, a.vocab, id, occ[id], growOptions{agreement: majority, maxLen: 40, written: true}); len(q) > 1 {
				ps.add(q, a.vocab[id])
			}
		}
	}
	return nil
}

// markedPhrases adds the marked cues: candidates whatever their
// association.
func (a *auditor) markedPhrases(ps *phraseSet) error {
	wordID := map[string]int32{}
	for id, w := range a.vocab {
		if _, ok := wordID[w]; !ok {
			wordID[w] = int32(id)
		}
	}
	for _, kind := range []string{MarkArtifact, MarkTask} {
		for _, ws := range a.opt.Marks.Cues(kind) {
			p := make(phrase, len(ws))
			for i, w := range ws {
				if w == NumberWord {
					p[i] = anyNumber
					continue
				}
				id, ok := wordID[w]
				if !ok {
					return inputErrorf("audit: the marked cue %q holds %q, which is not a word of the model's vocabulary: mark the cue as the audit shows it",
						strings.Join(ws, " "), w)
				}
				p[i] = id
			}
			ps.add(p, "")
		}
	}
	return nil
}

// candidate is phrase p with its training occurrences occ, or nil when it
// is neither marked nor passes the association gate.
func (a *auditor) candidate(p phrase, seeds []string, occ []span) *Candidate {
	words := p.words(a.vocab)
	mark := a.opt.Marks.Get(words)
	docs := texts(occ)
	per := make([]int, a.m.Config.Classes)
	for _, i := range docs {
		per[a.train.Gold[i]]++
	}
	class, pv := a.assoc.best(per)
	if mark == "" && (len(docs) < a.opt.MinSupport || pv > a.assoc.cutoff) {
		return nil
	}
	c := &Candidate{Words: words, Text: strings.Join(words, " "), Class: class, Label: a.labels[class], Seeds: seeds,
		Mark: mark, Pattern: pattern(words), phrase: p, trainOcc: occ}
	c.Association = CueAssociation{Texts: len(docs), InLabel: per[class], PerClass: per, P: pv,
		Adjusted: a.assoc.adjusted(pv, len(p) == 1 && len(seeds) > 0)}
	if len(docs) > 0 {
		c.Association.Share = float64(per[class]) / float64(len(docs))
	}
	c.Signals, c.Position = trainingSignals(a.train, a.vocab, occ, len(p), per[class], len(docs))
	c.Surface = surface(a.train, a.vocab, p, occ)
	return c
}

// surface is the most common original form of the occurrences of p, the
// digits of its number elements written as '#', or the words joined when
// the text is unknown.
func surface(d Data, vocab []string, p phrase, occ []span) string {
	count := map[string]int{}
	step := max(1, len(occ)/maxSignalSamples)
	for k := 0; k < len(occ); k += step {
		s := occ[k]
		var form string
		if d.Tokens == nil {
			form = strings.Join(p.words(vocab), " ")
		} else {
			i, toks := int(s.text), d.Tokens[s.text]
			var b strings.Builder
			for j := int(s.start); j < int(s.end); j++ {
				if j > int(s.start) {
					b.WriteString(d.Texts[i][toks[j-1].End:toks[j].Start])
				}
				w := d.Texts[i][toks[j].Start:toks[j].End]
				if p[j-int(s.start)] == anyNumber {
					w = strings.Repeat("#", len(w))
				}
				b.WriteString(w)
			}
			form = b.String()
		}
		count[form]++
	}
	best := ""
	for s, n := range count {
		if n > count[best] || n == count[best] && s < best {
			best = s
		}
	}
	return best
}

// heldoutPasses builds the slot table, runs both halves once, finds every
// candidate's occurrences there and measures the shift (on the selection
// half).
func (a *auditor) heldoutPasses(ctx context.Context, cands []*Candidate) error {
	a.progress("held-out", 0, 2)
	count := make([]int, a.m.Config.VocabSize)
	for _, d := range []Data{a.sel, a.conf} {
		for _, t := range d.IDs {
			for _, id := range t {
				count[id]++
			}
		}
	}
	var ws []int32
	for id, n := range count {
		if n > 0 {
			ws = append(ws, int32(id))
		}
	}
	// Neutral words are edited in: table them too.
	a.neutral = a.neutralWords(cands)
	ws = append(ws, a.neutral...)
	slices.SortStableFunc(ws, func(x, y int32) int { return cmp.Compare(count[y], count[x]) })
	st, err := explain.NewSlotTable(a.m, explain.TableOptions{Words: slices.Compact(ws), MaxBytes: a.opt.TableBytes, Workers: a.opt.Workers})
	if err != nil {
		return err
	}
	a.st = st
	C, nf := a.m.Config.Classes, a.m.Config.NumFilters()
	if a.selBase, err = runBase(ctx, st, a.sel, C, nf, a.opt.Workers); err != nil {
		return err
	}
	a.progress("held-out", 1, 2)
	if a.confBase, err = runBase(ctx, st, a.conf, C, nf, a.opt.Workers); err != nil {
		return err
	}
	phrases := make([]phrase, len(cands))
	for k, c := range cands {
		phrases[k] = c.phrase
	}
	mt := newMatcher(phrases, a.vocab)
	selOcc, confOcc := mt.occurrences(a.sel), mt.occurrences(a.conf)
	for k, c := range cands {
		c.selOcc, c.confOcc = selOcc[k], confOcc[k]
	}
	a.shifts(cands)
	for _, c := range cands {
		c.ArtifactLikeness = artifactScore(c.Signals)
	}
	a.progress("held-out", 2, 2)
	return nil
}

// shiftSays opens the shift signal's reason, which names the choosing
// half: its share is a reason the cue was chosen, never the evidence
// shown of it (ConfirmedShift).
const shiftSays = "in the choosing half of the test texts"

// shiftAlpha is the false discovery rate at which a shift counts.
const shiftAlpha = 0.01

// shifts compares each cue's label share in the selection half with
// training and adds the shift signal. Each cue that occurs in the
// selection half is tested (two-sided Fisher), and the p-values are
// corrected together by Benjamini & Hochberg (1995, BenjaminiHochberg):
// a shift is present when its q is below shiftAlpha and the held-out share
// is the lower, so that among the hundreds of candidates a chance shift
// does not make a cue artifact-like (the signal's weight alone passes
// ArtifactThreshold). The confirmation half takes no part: its tests
// decide the verdict and give every figure shown, so nothing it holds may
// choose or rank a cue.
func (a *auditor) shifts(cands []*Candidate) {
	var tested []*Candidate
	for _, c := range cands {
		c.Shift = a.shiftOf(c)
		if c.Shift.HeldoutTexts > 0 {
			tested = append(tested, c)
		}
	}
	ps := make([]float64, len(tested))
	for k, c := range tested {
		ps[k] = c.Shift.P
	}
	for k, q := range BenjaminiHochberg(ps) {
		s := tested[k].Shift
		s.Q = q
		s.Present = q < shiftAlpha && s.HeldoutShare < s.TrainShare
	}
	for _, c := range cands {
		a.shiftSignal(c, len(tested))
	}
}

// shiftOf counts the selection half's texts holding c and those in its
// label, and tests them against training (two-sided Fisher); Q and
// Present are left to shifts. The training counts are those that made c a
// candidate (an extreme label share), so even without a shift the
// held-out share tends to come out lower (regression to the mean): the
// test leans towards finding a shift, and Benjamini–Hochberg does not undo
// that; the README says so beside the signal.
func (a *auditor) shiftOf(c *Candidate) *Shift {
	in, n := inLabel(c.selOcc, a.sel.Gold, c.Class)
	s := &Shift{HeldoutTexts: n, TrainShare: c.Association.Share, P: 1, Q: 1}
	if n > 0 {
		s.HeldoutShare = float64(in) / float64(n)
		ta := c.Association
		s.P = FisherTwoSided(ta.InLabel, ta.Texts-ta.InLabel, in, n-in)
	}
	return s
}

// inLabel counts the texts of a half that hold occurrences occ, n, and
// those of them whose gold label is class, in.
func inLabel(occ []span, gold []int, class int) (in, n int) {
	for _, i := range texts(occ) {
		n++
		if gold[i] == class {
			in++
		}
	}
	return in, n
}

// shiftSignal adds c's shift signal from c.Shift; tested is how many
// cues' shifts were corrected together.
func (a *auditor) shiftSignal(c *Candidate, tested int) {
	s := c.Shift
	v, says := 0.0, "its label share is the same in the choosing half of the test texts"
	switch {
	case s.HeldoutTexts == 0:
		says = "it does not occur in the choosing half of the test texts"
	case !s.Present && s.HeldoutShare >= s.TrainShare:
		says = fmt.Sprintf("its label share is no lower in the choosing half of the test texts (%s, against %s in training)",
			pct(s.HeldoutShare), pct(s.TrainShare))
	case !s.Present:
		says = fmt.Sprintf("its label share in the choosing half of the test texts (%s, against %s in training) is not lower beyond chance "+
			"(Fisher p = %s; q = %s by Benjamini–Hochberg over %d cues)", pct(s.HeldoutShare), pct(s.TrainShare), pval(s.P), pval(s.Q), tested)
	case s.Present:
		v = min(1, (s.TrainShare-s.HeldoutShare)/max(1e-9, s.TrainShare-1/float64(a.m.Config.Classes)))
		says = fmt.Sprintf(shiftSays+" only %s of those holding it are %s, against %s in training (Fisher p = %s; q = %s by Benjamini–Hochberg over %d cues)",
			pct(s.HeldoutShare), c.Label, pct(s.TrainShare), pval(s.P), pval(s.Q), tested)
	}
	c.Signals = append(c.Signals, Signal{Name: SignalShift, Value: max(0, v), Weight: signalWeights[SignalShift], Says: says})
}

// confirmedShiftAlpha is the family-wise error rate (Holm) at which the
// confirmation half shows a cue's label share lower than in training.
const confirmedShiftAlpha = 0.05

// confirmedShiftOf counts the confirmation half's texts holding c and those
// in its label, and tests them against training (one-sided Fisher: lower
// than in training); nil when none holds it. Holm, Family and Lower are
// left to holmShifts; only confirmedShifts calls it, for the cues of the
// family.
func (a *auditor) confirmedShiftOf(c *Candidate) *ConfirmedShift {
	in, n := inLabel(c.confOcc, a.conf.Gold, c.Class)
	if n == 0 {
		return nil
	}
	iv := cnn.ClopperPearsonInterval(in, n, 0.95)
	ta := c.Association
	// The training row first: FisherGreater's alternative, the training
	// texts holding more of the label, is the confirming share's being lower.
	return &ConfirmedShift{Texts: n, InLabel: in, Share: Interval{Estimate: iv.Estimate, Low: iv.Low, High: iv.High, Method: iv.Method},
		TrainShare: ta.Share, P: FisherGreater(ta.InLabel, ta.Texts-ta.InLabel, in, n-in)}
}

// confirmedShifts measures the confirmation half's shift (confirmedShiftOf)
// of each cue of cs, the cues put to the test there, whose selection half
// shows a shift and which some confirming text holds: the family of the
// Holm correction (holmShifts), fixed before the confirmation half's labels
// are read. Every other cue of cs is left without one (ShiftConfirmed nil),
// as is every cue not put to the test (Run never measures theirs): the
// one-sided test is reported only where it is corrected. Shown, never used
// to choose or rank.
func (a *auditor) confirmedShifts(cs []*Candidate) {
	var family []*ConfirmedShift
	for _, c := range cs {
		c.ShiftConfirmed = nil
		if c.Shift == nil || !c.Shift.Present {
			continue
		}
		if s := a.confirmedShiftOf(c); s != nil {
			c.ShiftConfirmed = s
			family = append(family, s)
		}
	}
	holmShifts(family)
}

// holmShifts corrects the confirmation half's shift tests of family by Holm
// (1979, "A simple sequentially rejective multiple test procedure", Scand.
// J. Statist. 6:65–70; explain.Holm) and sets Holm, Family and Lower.
func holmShifts(family []*ConfirmedShift) {
	ps := make([]float64, len(family))
	for k, s := range family {
		ps[k] = s.P
	}
	for k, q := range explain.Holm(ps) {
		s := family[k]
		s.Holm, s.Family = q, len(family)
		s.Lower = q <= confirmedShiftAlpha && s.Share.Estimate < s.TrainShare
	}
}

// neutralWords are the label-neutral words edits put in: words of letters
// only, in no candidate and in at least max(20, MinSupport) training texts,
// whose label shares differ from the training split's by a total variation
// distance of at most 0.05 (an effect size, not a test: with many texts
// every word's test rejects), the 50 most common; when fewer than 10 pass,
// the 50 closest to the training split's shares.
func (a *auditor) neutralWords(cands []*Candidate) []int32 {
	inCand := map[int32]bool{}
	for _, c := range cands {
		for _, id := range c.phrase {
			inCand[id] = true
		}
	}
	C := a.assoc.classes
	type word struct {
		id int32
		tv float64
	}
	var ws []word
	for id, w := range a.vocab {
		n := int(a.assoc.count[id])
		if n < max(20, a.opt.MinSupport) || inCand[int32(id)] || !onlyLetters(w) {
			continue
		}
		var tv float64
		for c := range C {
			share := float64(a.assoc.perClass[id*C+c]) / float64(n)
			tv += math.Abs(share - float64(a.assoc.classTexts[c])/float64(a.assoc.texts))
		}
		ws = append(ws, word{int32(id), tv / 2})
	}
	byCount := func(x, y word) int { return cmp.Compare(a.assoc.count[y.id], a.assoc.count[x.id]) }
	var near []word
	for _, w := range ws {
		if w.tv <= 0.05 {
			near = append(near, w)
		}
	}
	if len(near) < 10 {
		slices.SortStableFunc(ws, func(x, y word) int { return cmp.Compare(x.tv, y.tv) })
		near = ws[:min(len(ws), 50)]
	}
	slices.SortStableFunc(near, byCount)
	out := make([]int32, 0, 50)
	for _, w := range near[:min(len(near), 50)] {
		out = append(out, w.id)
	}
	return out
}

func onlyLetters(w string) bool {
	if w == "" {
		return false
	}
	for _, r := range w {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r > 127 && !isPunct(string(r))) {
			return false
		}
	}
	return true
}
