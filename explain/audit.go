package explain

import (
	"cmp"
	"context"
	"fmt"
	"math"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"

	"telltale/cnn"
)

// AuditOptions controls RunAudit. Zero values select the defaults.
type AuditOptions struct {
	// Association controls the token–label statistics (Associate).
	Association AssociationOptions
	// Profiles are m's filter profiles over the training split; nil
	// computes them with Profile and the options in Profile (its Table,
	// Workers and Progress are filled in by RunAudit when unset).
	Profiles *Profiles
	Profile  ProfileOptions
	// Table is a slot table of m; nil builds one over the words of both
	// splits (bounded by Profile.TableMax).
	Table *SlotTable
	// Top is the number of suspect filters reported (default 20).
	Top int
	// CueShare is the least share of a filter's above-threshold slot mass
	// a flagged word must carry to count as one of the filter's cues
	// (default 0.1); the heaviest flagged word always counts.
	CueShare float64
	// MaxCues is the most cue words per filter (default 3).
	MaxCues int
	// NeutralZ: a word is label-neutral when |z| < NeutralZ for every class
	// (default 1).
	NeutralZ float64
	// Neutrals is the number of neutral alternatives of similar frequency
	// drawn from for a cue (default 10).
	Neutrals int
	// Draws is the number of seeded substitutions per held-out text
	// (default 2).
	Draws int
	// BoilerplateTexts: a line is boilerplate when at least this many
	// training texts contain it (default max(5, 1% of the training texts));
	// BoilerplateBytes is the shortest such line (default 8).
	BoilerplateTexts int
	BoilerplateBytes int
	// Examples is the number of quoted examples behind each figure
	// (default 3).
	Examples int
	// GroupJaccard is the least Jaccard index of two flagged words'
	// training texts for them to join one cue group (default 0.8;
	// GroupRule).
	GroupJaccard float64
	// ModelFile and HeldoutFile, when set, name the model and held-out
	// files in the command WriteText suggests (else MODEL and HELDOUT).
	ModelFile, HeldoutFile string
	// Seed seeds the counterfactual draws.
	Seed uint64
	// Workers is the number of goroutines (0: GOMAXPROCS).
	Workers int
}

func (o *AuditOptions) defaults(train int) {
	def := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	def(&o.Top, 20)
	def(&o.MaxCues, 3)
	def(&o.Neutrals, 10)
	def(&o.Draws, 2)
	def(&o.BoilerplateTexts, max(5, int(math.Ceil(0.01*float64(train)))))
	def(&o.BoilerplateBytes, 8)
	def(&o.Examples, 3)
	if o.Workers <= 0 {
		o.Workers = runtime.GOMAXPROCS(0)
	}
	if o.CueShare <= 0 {
		o.CueShare = 0.1
	}
	if o.NeutralZ <= 0 {
		o.NeutralZ = 1
	}
	if o.GroupJaccard <= 0 || o.GroupJaccard > 1 {
		o.GroupJaccard = 0.8
	}
}

// AuditProgress is called during RunAudit with the stage ("profile",
// "evidence", "heldout", "counterfactual"), the items done and the total.
// It may be called from several goroutines.
type AuditProgress func(stage string, done, total int)

// ScoreFormula states how Suspect.Score is made from its parts.
const ScoreFormula = "score = flagged_share × max(0, harm), harm = conflict_share × conflict_gain: the share of the " +
	"filter's above-threshold slot mass (training split) on flagged words, times how much masking the filter raises " +
	"the gold label's probability on held-out texts where its cue points to another label, averaged over all " +
	"held-out texts with the cue; ties are ranked by flagged_share × push. The list is ordered by cue group (group_rule): " +
	"the highest-scoring filter of each group with a positive group score, groups in order of their score, then the " +
	"second of each, and so on; then the other filters by score"

// Audit is the result of RunAudit: the words that predict a label by
// themselves and the filters that lean on them, with the evidence.
type Audit struct {
	Labels       []string `json:"labels"`
	TrainTexts   int      `json:"train_texts"`
	HeldoutTexts int      `json:"heldout_texts"`
	// Prior, PriorKind, Alpha, Tested and Threshold describe the token
	// test (see Association).
	Prior     []float64 `json:"prior"`
	PriorKind string    `json:"prior_kind"`
	Alpha     float64   `json:"alpha"`
	Tested    int       `json:"tested"`
	Threshold float64   `json:"z_threshold"`
	Smoothing float64   `json:"pmi_smoothing"`
	// Tokens are the flagged words, largest z first.
	Tokens []FlaggedToken `json:"tokens"`
	// Baseline is the model on the held-out split.
	Baseline Baseline `json:"baseline"`
	// Filters are the suspects, highest score first; Candidates is how many
	// filters were scored (active filters with flagged slot mass).
	Filters    []Suspect `json:"filters"`
	Candidates int       `json:"candidates"`
	Formula    string    `json:"score_formula"`
	// CueGroups are the flagged words merged into artifacts with the
	// filters keyed on them and their joint interventions, highest score
	// first (GroupRule, GroupFormula): the first Top groups and any group
	// of a listed suspect. Groups is how many groups have member filters.
	CueGroups    []CueGroup `json:"cue_groups"`
	Groups       int        `json:"groups"`
	GroupRule    string     `json:"group_rule"`
	GroupFormula string     `json:"group_formula"`
	// Plan is the suggested mask (nil when no group's joint masking raises
	// held-out accuracy).
	Plan *MaskPlan `json:"suggested_mask"`
	// ModelFile and HeldoutFile are AuditOptions' file names, if given.
	ModelFile   string `json:"model_file,omitempty"`
	HeldoutFile string `json:"heldout_file,omitempty"`
}

// FlaggedToken is a word whose dominant label's z passes the threshold.
type FlaggedToken struct {
	Token    string  `json:"token"`
	ID       int32   `json:"id"`
	Count    int     `json:"count"` // training texts containing it
	Label    string  `json:"label"` // dominant label
	Class    int     `json:"class"`
	Share    float64 `json:"share"` // p̂(label | token)
	Z        float64 `json:"z"`
	PMI      float64 `json:"pmi"`
	PerClass []int   `json:"per_class"`
	Category string  `json:"category,omitempty"`
	// Heldout is the number of held-out texts containing it.
	Heldout int `json:"heldout"`
}

// Baseline is the unmasked model on the held-out split.
type Baseline struct {
	Accuracy float64 `json:"accuracy"`
	MacroF1  float64 `json:"macro_f1"`
}

// Suspect is one filter with the evidence that it keys on a cue.
type Suspect struct {
	Filter int     `json:"filter"`
	Width  int     `json:"width"`
	Class  int     `json:"class"` // the class it votes for
	Label  string  `json:"label"`
	Score  float64 `json:"score"`
	Parts  Parts   `json:"parts"`
	// Group is the 1-based position of its cue group in Audit.CueGroups
	// (0: it joined none).
	Group int `json:"cue_group"`
	// Cues are its cue words: flagged words carrying most of its slot mass
	// (the heaviest, then those of the same label with at least CueShare of
	// the mass, at most MaxCues). The interventions act on them.
	Cues []Cue `json:"cues"`
	// Words lists every flagged word in at least 5% of its above-threshold
	// windows (at most 10, by mass share): what its windows hold, whether
	// or not the word's own slot score drives the activation.
	Words         []Cue           `json:"flagged_words"`
	Concentration Concentration   `json:"concentration"`
	TopNgrams     []AuditNgram    `json:"top_ngrams"`
	Categories    []CategoryShare `json:"categories"`
	Ablation      Ablation        `json:"ablation"`
	Conflict      Conflict        `json:"conflict"`
	Counter       *Counterfactual `json:"counterfactual"`
	Examples      SuspectExamples `json:"examples"`
}

// Parts are the numbers a suspect's score is made of, and their bases.
type Parts struct {
	// FlaggedShare = FlaggedMass / Mass over the filter's winning windows
	// at or above its purity threshold in the training split, where a
	// window's mass is Σ_s max(0, slot score s) and its flagged mass sums
	// the slots holding flagged words.
	FlaggedShare float64 `json:"flagged_share"`
	FlaggedMass  float64 `json:"flagged_mass"`
	Mass         float64 `json:"mass"`
	AboveWindows int     `json:"above_windows"`
	Threshold    float64 `json:"threshold"`
	// Push is the mean over the PushTexts held-out texts that contain a cue
	// word of p(cue label) − p(cue label | filter masked): how hard the
	// filter pulls toward the cue's label where the cue is.
	Push      float64 `json:"push"`
	PushTexts int     `json:"push_texts"`
	// ConflictShare is the share of those texts whose gold label is not
	// the cue's; ConflictGain the mean over them of p(gold | filter masked)
	// − p(gold); Harm = ConflictShare × ConflictGain.
	ConflictShare float64 `json:"conflict_share"`
	ConflictGain  float64 `json:"conflict_gain"`
	Harm          float64 `json:"harm"`
}

// Cue is one of a filter's cue words.
type Cue struct {
	Token string  `json:"token"`
	ID    int32   `json:"id"`
	Label string  `json:"label"` // the word's dominant label
	Z     float64 `json:"z"`
	// MassShare is the share of the filter's above-threshold slot mass in
	// slots holding this word; WindowShare the share of above-threshold
	// windows containing it.
	MassShare   float64 `json:"mass_share"`
	WindowShare float64 `json:"window_share"`
}

// Concentration tells how much the filter's dominant slot (the slot with
// the largest positive slot mass over above-threshold windows) is tied to
// one word.
type Concentration struct {
	Slot int `json:"slot"`
	// Entropy (bits) of the words at that slot over the above-threshold
	// windows; Normalized = Entropy / log2(windows), 0 when one word fills
	// the slot every time, 1 when every window has another word.
	Entropy    float64 `json:"entropy"`
	Normalized float64 `json:"normalized"`
	TopWord    string  `json:"top_word"`
	TopShare   float64 `json:"top_share"`
}

// AuditNgram is one of a filter's top n-grams with its categories.
type AuditNgram struct {
	Tokens     []string  `json:"tokens"`
	Slots      []float64 `json:"slots"`
	Activation float64   `json:"activation"`
	Count      int       `json:"count"`
	Categories []string  `json:"categories,omitempty"`
}

// CategoryShare is the share of a filter's top n-grams (weighted by their
// counts) in an artifact category; for boilerplate, the share of its
// above-threshold training windows lying inside boilerplate lines.
type CategoryShare struct {
	Category string   `json:"category"`
	Share    float64  `json:"share"`
	Ngrams   []string `json:"ngrams,omitempty"`
}

// Ablation is the held-out split with the filter masked.
type Ablation struct {
	Accuracy       float64 `json:"accuracy"`
	AccuracyMasked float64 `json:"accuracy_masked"`
	DeltaAccuracy  float64 `json:"delta_accuracy"`
	MacroF1        float64 `json:"macro_f1"`
	MacroF1Masked  float64 `json:"macro_f1_masked"`
	DeltaMacroF1   float64 `json:"delta_macro_f1"`
	Flipped        int     `json:"flipped"`
	FlippedShare   float64 `json:"flipped_share"`
	// Fixed and Broken count the flips that turn a wrong prediction right
	// and a right one wrong.
	Fixed        int   `json:"fixed"`
	Broken       int   `json:"broken"`
	FlippedTexts []int `json:"flipped_texts,omitempty"` // held-out indices, at most 100
}

// Conflict is the cue-conflicting subset: held-out texts that contain a cue
// word while their gold label differs from the cue's label.
type Conflict struct {
	CueLabel       string  `json:"cue_label"`
	Texts          int     `json:"texts"`
	Accuracy       float64 `json:"accuracy"`
	AccuracyMasked float64 `json:"accuracy_masked"`
	Fixed          int     `json:"fixed"`             // wrong with the filter, right without
	Broken         int     `json:"broken"`            // right with the filter, wrong without
	Indices        []int   `json:"indices,omitempty"` // held-out indices, at most 200
}

// Counterfactual is the effect of replacing the cue words in held-out texts
// by label-neutral words of similar frequency (the unmasked model).
type Counterfactual struct {
	Cues         []string `json:"cues"`
	Alternatives []string `json:"alternatives"`
	Texts        int      `json:"texts"` // held-out texts containing a cue
	Draws        int      `json:"draws"` // substitutions per text
	Flips        int      `json:"flips"`
	FlipRate     float64  `json:"flip_rate"` // flips / (texts·draws)
	// MeanProbChange is the mean of p(ŷ | edited) − p(ŷ), ŷ the original
	// prediction.
	MeanProbChange float64 `json:"mean_prob_change"`
	// The control puts the same alternatives at as many random non-cue
	// positions of the same texts: flips there are not the cue's doing.
	ControlFlips    int     `json:"control_flips"`
	ControlFlipRate float64 `json:"control_flip_rate"`
	ControlChange   float64 `json:"control_mean_prob_change"`
	Indices         []int   `json:"indices,omitempty"` // held-out texts used, at most 200
}

// SuspectExamples quotes the texts behind a suspect's numbers.
type SuspectExamples struct {
	Windows        []AuditExample `json:"windows"`        // training windows above threshold holding a cue
	Conflict       []AuditExample `json:"conflict"`       // cue-conflicting held-out texts masking changes
	Counterfactual []AuditExample `json:"counterfactual"` // substitutions that flipped the prediction
}

// AuditExample is one quoted text.
type AuditExample struct {
	Split   string  `json:"split"` // "train" or "heldout"
	Index   int     `json:"index"`
	Start   int     `json:"start"` // token span quoted
	End     int     `json:"end"`
	Snippet string  `json:"snippet"`
	Gold    string  `json:"gold"`
	Pred    string  `json:"pred,omitempty"`
	After   string  `json:"pred_after,omitempty"` // prediction after the intervention
	Value   float64 `json:"value"`                // activation, or probability of ŷ after
	Note    string  `json:"note,omitempty"`
}

// RunAudit looks for filters of m that key on spurious cues. Train is the
// split m was trained on (token statistics and profiles come from it);
// heldout is a split it was not trained on (all interventions run there).
// Progress may be nil. It returns ctx.Err() when cancelled.
//
// Steps: (1) token–label association on train (Associate); (2) per active
// filter, from its winning windows at or above its purity threshold in
// train: the share of slot mass on flagged words, its cue words, the
// concentration of its dominant slot, the categories of its top n-grams;
// (3) on heldout, for every such filter, exact ablation (masking filter g
// subtracts OutW[c][g]·h[g] from each logit, the identity of the model's
// layout, so no re-run is needed; a test checks it against Model.Masked),
// the push toward the cue's label and the harm on the cue-conflicting
// subset; (4) cue groups (GroupRule): flagged words merged by the overlap
// of their training texts, each scored filter joined to the group it keys
// on, and per group the joint intervention of all its filters masked
// together (GroupFormula), the prefix of its strongest filters that masks
// best, and a suggested mask (MaskPlan); (5) the ranking of the suspects
// round robin over the groups (ScoreFormula) and, for the Top suspects and
// the first groups, counterfactual substitution of their cue words by
// label-neutral words.
func RunAudit(ctx context.Context, m *cnn.Model, train, heldout AuditData, opt AuditOptions, progress AuditProgress) (*Audit, error) {
	if err := m.Config.Validate(); err != nil {
		return nil, err
	}
	if err := train.check(m, "training"); err != nil {
		return nil, err
	}
	if err := heldout.check(m, "held-out"); err != nil {
		return nil, err
	}
	if train.Len() == 0 || heldout.Len() == 0 {
		return nil, fmt.Errorf("explain: the audit needs texts in both splits (training %d, held-out %d)", train.Len(), heldout.Len())
	}
	opt.defaults(train.Len())
	if progress == nil {
		progress = func(string, int, int) {}
	}
	a := &auditor{m: m, train: train, held: heldout, opt: opt, progress: progress, nf: m.Config.NumFilters(), C: m.Config.Classes}
	words := make([]string, m.Config.VocabSize)
	for id := range words {
		words[id] = wordOf(m, int32(id))
	}
	a.assoc = Associate(train.IDs, train.Gold, labelNames(m), words, opt.Association)
	if err := a.table(); err != nil {
		return nil, err
	}
	if err := a.profiles(ctx); err != nil {
		return nil, err
	}
	if err := a.evidence(ctx); err != nil {
		return nil, err
	}
	if err := a.heldoutPass(ctx); err != nil {
		return nil, err
	}
	return a.assemble(ctx)
}

type auditor struct {
	m        *cnn.Model
	train    AuditData
	held     AuditData
	opt      AuditOptions
	progress AuditProgress
	nf, C    int
	assoc    *Association
	st       *SlotTable
	prof     *Profiles
	ev       []filterEvidence
	// held-out pass
	pooled []float32 // n × nf
	logits []float64 // n × C
	pred   []int
	index  map[int32][]int // flagged word → held-out texts containing it
}

func (a *auditor) flagged(id int32) bool {
	s := a.assoc.Stat(id)
	return s != nil && s.Flagged
}

func (a *auditor) table() error {
	if a.opt.Table != nil {
		if a.opt.Table.Model() != a.m {
			return fmt.Errorf("explain: the slot table was built for another model")
		}
		a.st = a.opt.Table
		return nil
	}
	count := make([]int, a.m.Config.VocabSize)
	for _, d := range []AuditData{a.train, a.held} {
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
	slices.SortStableFunc(ws, func(x, y int32) int { return cmp.Compare(count[y], count[x]) })
	st, err := NewSlotTable(a.m, TableOptions{Words: ws, MaxBytes: a.opt.Profile.TableMax, Workers: a.opt.Workers})
	a.st = st
	return err
}

func (a *auditor) profiles(ctx context.Context) error {
	if a.opt.Profiles != nil {
		a.prof = a.opt.Profiles
	} else {
		po := a.opt.Profile
		if po.Table == nil {
			po.Table = a.st
		}
		if po.Workers <= 0 {
			po.Workers = a.opt.Workers
		}
		if po.Progress == nil {
			po.Progress = func(done, total int) { a.progress("profile", done, total) }
		}
		p, err := Profile(ctx, a.m, a.train.IDs, a.train.Gold, po)
		if err != nil {
			return err
		}
		a.prof = p
	}
	if len(a.prof.Filters) != a.nf {
		return fmt.Errorf("explain: profiles describe %d filters, the model has %d", len(a.prof.Filters), a.nf)
	}
	return nil
}

// active reports whether filter g takes part in the audit: not masked, not
// idle, with a finite purity threshold.
func (a *auditor) active(g int) bool {
	p := &a.prof.Filters[g]
	return !a.m.IsMasked(g) && !p.Idle && !math.IsInf(p.Threshold, 0) && !math.IsNaN(p.Threshold)
}

// filterEvidence is what the training scan gathers for one filter.
type filterEvidence struct {
	mass, flagMass float64
	above, boiler  int
	slotMass       []float64
	slotWords      []map[int32]int32
	cueMass        map[int32]float64
	cueWins        map[int32]int32
	top            []auditWin // best windows holding a flagged word
}

type auditWin struct {
	text, start int
	act         float32
}

const keepWindows = 16

func newEvidence(w int) filterEvidence {
	e := filterEvidence{slotMass: make([]float64, w), slotWords: make([]map[int32]int32, w),
		cueMass: map[int32]float64{}, cueWins: map[int32]int32{}}
	for s := range e.slotWords {
		e.slotWords[s] = map[int32]int32{}
	}
	return e
}

func (e *filterEvidence) merge(o *filterEvidence) {
	e.mass += o.mass
	e.flagMass += o.flagMass
	e.above += o.above
	e.boiler += o.boiler
	for s := range e.slotMass {
		e.slotMass[s] += o.slotMass[s]
		for id, n := range o.slotWords[s] {
			e.slotWords[s][id] += n
		}
	}
	for id, v := range o.cueMass {
		e.cueMass[id] += v
	}
	for id, n := range o.cueWins {
		e.cueWins[id] += n
	}
	for _, w := range o.top {
		e.keep(w)
	}
}

// keep inserts w among the best windows (activation descending, then text
// and start ascending, so the result does not depend on scan order).
func (e *filterEvidence) keep(w auditWin) {
	better := func(x, y auditWin) bool {
		if x.act != y.act {
			return x.act > y.act
		}
		if x.text != y.text {
			return x.text < y.text
		}
		return x.start < y.start
	}
	if len(e.top) == keepWindows && !better(w, e.top[len(e.top)-1]) {
		return
	}
	i := 0
	for i < len(e.top) && better(e.top[i], w) {
		i++
	}
	if len(e.top) < keepWindows {
		e.top = append(e.top, auditWin{})
	}
	copy(e.top[i+1:], e.top[i:len(e.top)-1])
	e.top[i] = w
}

// evidence scans the training split once.
func (a *auditor) evidence(ctx context.Context) error {
	m, nf := a.m, a.nf
	var inBoiler [][]bool
	if a.train.Tokens != nil {
		lines := Boilerplate(a.train.Texts, a.opt.BoilerplateTexts, a.opt.BoilerplateBytes)
		inBoiler = make([][]bool, a.train.Len())
		for i, toks := range a.train.Tokens {
			if len(lines[i]) == 0 {
				continue
			}
			b := make([]bool, len(toks))
			k := 0
			for j, t := range toks {
				for k < len(lines[i]) && lines[i][k][1] < t.End {
					k++
				}
				b[j] = k < len(lines[i]) && lines[i][k][0] <= t.Start && t.End <= lines[i][k][1]
			}
			inBoiler[i] = b
		}
	}
	thr := make([]float32, nf)
	act := make([]bool, nf)
	for g := range thr {
		act[g] = a.active(g)
		thr[g] = float32(a.prof.Filters[g].Threshold)
	}
	flag := make([]bool, m.Config.VocabSize)
	for _, s := range a.assoc.Stats {
		flag[s.ID] = s.Flagged
	}
	workers := a.opt.Workers
	accs := make([][]filterEvidence, workers)
	for w := range accs {
		accs[w] = make([]filterEvidence, nf)
		for g := range accs[w] {
			if act[g] {
				accs[w][g] = newEvidence(m.FilterWidth(g))
			}
		}
	}
	seen := make([][]int32, workers)
	err := Scan(ctx, a.st, a.train.IDs, workers, func(d, t int) { a.progress("evidence", d, t) }, func(wk, text int, p *Pass) {
		acc := accs[wk]
		n := len(a.train.IDs[text])
		for g := 0; g < nf; g++ {
			if !act[g] || p.Pre[g] <= 0 || p.Pre[g] < thr[g] {
				continue
			}
			e := &acc[g]
			w := m.FilterWidth(g)
			t0 := int(p.Start[g])
			e.above++
			hasFlag := false
			boiler := inBoiler != nil && inBoiler[text] != nil
			seen[wk] = seen[wk][:0]
			for s := 0; s < w; s++ {
				id := p.IDs[t0+s]
				if boiler && t0+s < n && !inBoiler[text][t0+s] {
					boiler = false
				}
				e.slotWords[s][id]++
				if flag[id] && !slices.Contains(seen[wk], id) {
					seen[wk] = append(seen[wk], id)
				}
				v := float64(a.st.SlotScore(g, s, id))
				if v <= 0 {
					continue
				}
				e.mass += v
				e.slotMass[s] += v
				if flag[id] {
					hasFlag = true
					e.flagMass += v
					e.cueMass[id] += v
				}
			}
			for _, id := range seen[wk] {
				e.cueWins[id]++
			}
			if boiler && t0 < n {
				e.boiler++
			}
			if hasFlag {
				e.keep(auditWin{text: text, start: t0, act: p.Pre[g]})
			}
		}
	})
	if err != nil {
		return err
	}
	a.ev = accs[0]
	for w := 1; w < workers; w++ {
		for g := range a.ev {
			if act[g] {
				a.ev[g].merge(&accs[w][g])
			}
		}
	}
	return nil
}

// heldoutPass runs the held-out split once and keeps pooled units and
// float64 logits (OutB + OutW·pooled) of every text.
func (a *auditor) heldoutPass(ctx context.Context) error {
	n, nf, C := a.held.Len(), a.nf, a.C
	a.pooled = make([]float32, n*nf)
	a.logits = make([]float64, n*C)
	a.pred = make([]int, n)
	err := Scan(ctx, a.st, a.held.IDs, a.opt.Workers, func(d, t int) { a.progress("heldout", d, t) }, func(_, text int, p *Pass) {
		copy(a.pooled[text*nf:(text+1)*nf], p.Pooled)
		z := a.logits[text*C : (text+1)*C]
		audHead(a.m, p.Pooled, z)
		a.pred[text] = audArgmax(z)
	})
	if err != nil {
		return err
	}
	a.index = map[int32][]int{}
	last := map[int32]int{}
	for i, t := range a.held.IDs {
		for _, id := range t {
			if !a.flagged(id) {
				continue
			}
			if l, ok := last[id]; ok && l == i {
				continue
			}
			last[id] = i
			a.index[id] = append(a.index[id], i)
		}
	}
	return nil
}

// audHead is the output layer in float64: z[c] = OutB[c] + Σ_g OutW[c][g]·h[g].
func audHead(m *cnn.Model, pooled []float32, z []float64) {
	nf := m.Config.NumFilters()
	for c := range z {
		row := m.OutW[c*nf : (c+1)*nf]
		v := float64(m.OutB[c])
		for g, h := range pooled {
			if h != 0 {
				v += float64(row[g]) * float64(h)
			}
		}
		z[c] = v
	}
}

func audArgmax(z []float64) int {
	best := 0
	for c := 1; c < len(z); c++ {
		if z[c] > z[best] {
			best = c
		}
	}
	return best
}

// audSoftmax writes softmax(z) into p.
func audSoftmax(z, p []float64) {
	mx := z[0]
	for _, v := range z[1:] {
		mx = max(mx, v)
	}
	var s float64
	for c, v := range z {
		p[c] = math.Exp(v - mx)
		s += p[c]
	}
	for c := range p {
		p[c] /= s
	}
}

// ablatedSet writes the logits of held-out text i with the filters gs
// masked together: z[c] = logit[c] − Σ_{g∈gs} OutW[c][g]·h[g], the exact
// effect of holding their pooled units at zero (the output layer is linear
// in the pooled layer); a test checks it against Model.Masked.
func (a *auditor) ablatedSet(i int, gs []int, z []float64) {
	for c := range z {
		v := a.logits[i*a.C+c]
		for _, g := range gs {
			v -= float64(a.m.OutW[c*a.nf+g]) * float64(a.pooled[i*a.nf+g])
		}
		z[c] = v
	}
}

// assemble scores every active filter with flagged mass, ranks them and
// adds counterfactuals and examples to the top ones.
func (a *auditor) assemble(ctx context.Context) (*Audit, error) {
	m := a.m
	labels := labelNames(m)
	out := &Audit{Labels: labels, TrainTexts: a.train.Len(), HeldoutTexts: a.held.Len(),
		Prior: a.assoc.Prior, PriorKind: a.assoc.PriorKind, Alpha: a.assoc.Alpha, Tested: a.assoc.Tested,
		Threshold: a.assoc.Threshold, Smoothing: a.assoc.Smoothing, Formula: ScoreFormula, Tokens: []FlaggedToken{},
		CueGroups: []CueGroup{}, GroupRule: GroupRule, GroupFormula: GroupFormula, ModelFile: a.opt.ModelFile, HeldoutFile: a.opt.HeldoutFile}
	for _, s := range a.assoc.Stats {
		if s.Flagged {
			out.Tokens = append(out.Tokens, FlaggedToken{Token: s.Token, ID: s.ID, Count: s.Count, Label: s.Label,
				Class: s.Class, Share: s.Share, Z: s.Z, PMI: s.PMI, PerClass: s.PerClass, Category: s.Category,
				Heldout: len(a.index[s.ID])})
		}
	}
	slices.SortStableFunc(out.Tokens, func(x, y FlaggedToken) int {
		if x.Z != y.Z {
			return cmp.Compare(y.Z, x.Z)
		}
		return cmp.Compare(x.ID, y.ID)
	})
	base := a.metricsSet(nil)
	out.Baseline = Baseline{Accuracy: base.Accuracy, MacroF1: base.MacroF1}

	var cands []int
	for g := 0; g < a.nf; g++ {
		if a.active(g) && a.ev[g].flagMass > 0 {
			cands = append(cands, g)
		}
	}
	out.Candidates = len(cands)
	sus := make([]Suspect, len(cands))
	audParallel(len(cands), a.opt.Workers, func(i int) { sus[i] = a.suspect(cands[i], base) })
	slices.SortStableFunc(sus, func(x, y Suspect) int {
		if x.Score != y.Score {
			return cmp.Compare(y.Score, x.Score)
		}
		if tx, ty := x.Parts.FlaggedShare*x.Parts.Push, y.Parts.FlaggedShare*y.Parts.Push; tx != ty {
			return cmp.Compare(ty, tx)
		}
		return cmp.Compare(x.Filter, y.Filter)
	})
	groups, of := a.cueGroups(sus, base)
	out.Groups = len(groups)
	sus, of = roundRobin(sus, of, groups)
	sus, of = sus[:min(len(sus), a.opt.Top)], of[:min(len(sus), a.opt.Top)]
	// Keep the first Top groups and those of the listed suspects.
	keep := make([]int, len(groups))
	for G := range keep {
		keep[G] = -1
	}
	for G := range groups {
		if G < a.opt.Top || slices.Contains(of, G) {
			keep[G] = len(out.CueGroups)
			out.CueGroups = append(out.CueGroups, groups[G])
		}
	}
	for i := range sus {
		if of[i] >= 0 {
			sus[i].Group = keep[of[i]] + 1
		}
	}
	out.Plan = a.plan(out.CueGroups, base)
	cache := map[string]*Counterfactual{}
	cacheEx := map[string][]AuditExample{}
	for i := range sus {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		a.progress("counterfactual", i, len(sus)+min(len(out.CueGroups), groupCounterfactuals))
		s := &sus[i]
		ids := make([]int32, len(s.Cues))
		for k, c := range s.Cues {
			ids[k] = c.ID
		}
		key := fmt.Sprint(ids)
		cf, ok := cache[key]
		if !ok {
			cf, cacheEx[key] = a.counterfactual(ctx, ids)
			cache[key] = cf
		}
		if cf != nil {
			cp := *cf
			s.Counter = &cp
		}
		s.Examples.Counterfactual = cacheEx[key]
	}
	ng := min(len(out.CueGroups), groupCounterfactuals)
	for i := range ng {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		a.progress("counterfactual", len(sus)+i, len(sus)+ng)
		cg := &out.CueGroups[i]
		key := fmt.Sprint(cg.IDs)
		cf, ok := cache[key]
		if !ok {
			cf, cacheEx[key] = a.counterfactual(ctx, cg.IDs)
			cache[key] = cf
		}
		if cf != nil {
			cp := *cf
			cg.Counter = &cp
		}
	}
	a.progress("counterfactual", len(sus)+ng, len(sus)+ng)
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	out.Filters = sus
	return out, nil
}

// metricsSet evaluates the held-out predictions with the filters gs masked
// together (none: the model as it is).
func (a *auditor) metricsSet(gs []int) cnn.Metrics {
	n := a.held.Len()
	pred := make([]int, n)
	z := make([]float64, a.C)
	for i := range pred {
		if len(gs) == 0 {
			pred[i] = a.pred[i]
			continue
		}
		a.ablatedSet(i, gs, z)
		pred[i] = audArgmax(z)
	}
	return cnn.ComputeMetrics(labelNames(a.m), a.held.Gold, pred, nil, 0)
}

// suspect scores filter g.
func (a *auditor) suspect(g int, base cnn.Metrics) Suspect {
	m, e, pr := a.m, &a.ev[g], &a.prof.Filters[g]
	labels := labelNames(m)
	s := Suspect{Filter: g, Width: m.FilterWidth(g), Class: pr.Class, Label: pr.Label}
	s.Parts = Parts{FlaggedMass: e.flagMass, Mass: e.mass, AboveWindows: e.above, Threshold: pr.Threshold}
	if e.mass > 0 {
		s.Parts.FlaggedShare = e.flagMass / e.mass
	}
	// Cue words: flagged words by slot mass; the heaviest one sets the cue
	// label, and only words of that label join it.
	type wm struct {
		id int32
		v  float64
	}
	var ws []wm
	for id, v := range e.cueMass {
		ws = append(ws, wm{id, v})
	}
	slices.SortFunc(ws, func(x, y wm) int {
		if x.v != y.v {
			return cmp.Compare(y.v, x.v)
		}
		return cmp.Compare(x.id, y.id)
	})
	cueClass := -1
	for k, w := range ws {
		st := a.assoc.Stat(w.id)
		if k == 0 {
			cueClass = st.Class
		} else if st.Class != cueClass || w.v/e.mass < a.opt.CueShare || len(s.Cues) == a.opt.MaxCues {
			continue
		}
		s.Cues = append(s.Cues, Cue{Token: st.Token, ID: w.id, Label: labels[st.Class], Z: st.Z,
			MassShare: w.v / e.mass, WindowShare: float64(e.cueWins[w.id]) / float64(max(1, e.above))})
	}
	for id, n := range e.cueWins {
		if share := float64(n) / float64(max(1, e.above)); share >= 0.05 {
			st := a.assoc.Stat(id)
			s.Words = append(s.Words, Cue{Token: st.Token, ID: id, Label: labels[st.Class], Z: st.Z,
				MassShare: e.cueMass[id] / e.mass, WindowShare: share})
		}
	}
	slices.SortFunc(s.Words, func(x, y Cue) int {
		if x.MassShare != y.MassShare {
			return cmp.Compare(y.MassShare, x.MassShare)
		}
		if x.WindowShare != y.WindowShare {
			return cmp.Compare(y.WindowShare, x.WindowShare)
		}
		return cmp.Compare(x.ID, y.ID)
	})
	s.Words = s.Words[:min(len(s.Words), 10)]
	s.Concentration = concentration(m, e)
	s.TopNgrams, s.Categories = a.categories(g)

	// Ablation, push and the cue-conflicting subset on the held-out split.
	cueIDs := make([]int32, len(s.Cues))
	for k, c := range s.Cues {
		cueIDs[k] = c.ID
	}
	iv := a.intervene([]int{g}, cueIDs, cueClass, base, "masking the filter")
	s.Ablation, s.Conflict = iv.ablation, iv.conflict
	s.Parts.Push, s.Parts.PushTexts = iv.push, iv.pushTexts
	s.Parts.ConflictShare, s.Parts.ConflictGain, s.Parts.Harm = iv.conflictShare, iv.conflictGain, iv.harm
	s.Examples.Conflict = iv.examples
	s.Score = s.Parts.FlaggedShare * max(0, s.Parts.Harm)

	for _, w := range e.top {
		if len(s.Examples.Windows) == a.opt.Examples {
			break
		}
		ids := a.train.IDs[w.text]
		hit := false
		for k := w.start; k < min(len(ids), w.start+s.Width); k++ {
			hit = hit || slices.ContainsFunc(s.Cues, func(c Cue) bool { return c.ID == ids[k] })
		}
		if !hit {
			continue
		}
		s.Examples.Windows = append(s.Examples.Windows, AuditExample{Split: "train", Index: w.text, Start: w.start,
			End: min(len(ids), w.start+s.Width), Snippet: a.train.snippet(m, w.text, w.start, w.start+s.Width, 50),
			Gold: labels[a.train.Gold[w.text]], Value: float64(w.act)})
	}
	return s
}

// cueTexts lists the held-out texts containing any of the cue words, in
// order.
func (a *auditor) cueTexts(cues []int32) []int {
	var out []int
	for _, id := range cues {
		out = append(out, a.index[id]...)
	}
	slices.Sort(out)
	return slices.Compact(out)
}

func (a *auditor) firstCue(i int, cues []int32) int {
	for k, id := range a.held.IDs[i] {
		if slices.Contains(cues, id) {
			return k
		}
	}
	return 0
}

// intervention is what masking a set of filters does on the held-out split.
type intervention struct {
	ablation                          Ablation
	conflict                          Conflict
	push                              float64
	pushTexts                         int
	conflictShare, conflictGain, harm float64
	examples                          []AuditExample // fixed first, then broken
}

// intervene masks the filters gs together (exactly: ablatedSet) and
// measures, on the whole held-out split, the change of accuracy, macro-F1
// and predictions, and on the held-out texts holding one of the cue words
// (label cueClass) the push toward cueClass and the cue-conflicting subset.
// What names the intervention in example notes ("masking the filter").
func (a *auditor) intervene(gs []int, cues []int32, cueClass int, base cnn.Metrics, what string) intervention {
	labels := labelNames(a.m)
	var iv intervention
	ab := a.metricsSet(gs)
	iv.ablation = Ablation{Accuracy: base.Accuracy, AccuracyMasked: ab.Accuracy, DeltaAccuracy: ab.Accuracy - base.Accuracy,
		MacroF1: base.MacroF1, MacroF1Masked: ab.MacroF1, DeltaMacroF1: ab.MacroF1 - base.MacroF1}
	z, p, q := make([]float64, a.C), make([]float64, a.C), make([]float64, a.C)
	for i := range a.pred {
		a.ablatedSet(i, gs, z)
		if after := audArgmax(z); after != a.pred[i] {
			switch gold := a.held.Gold[i]; gold {
			case after:
				iv.ablation.Fixed++
			case a.pred[i]:
				iv.ablation.Broken++
			}
			iv.ablation.Flipped++
			if len(iv.ablation.FlippedTexts) < 100 {
				iv.ablation.FlippedTexts = append(iv.ablation.FlippedTexts, i)
			}
		}
	}
	iv.ablation.FlippedShare = float64(iv.ablation.Flipped) / float64(len(a.pred))

	texts := a.cueTexts(cues)
	iv.conflict.CueLabel = labels[cueClass]
	var push, gain float64
	var right, rightMasked int
	var fixed, broken []AuditExample
	for _, i := range texts {
		audSoftmax(a.logits[i*a.C:(i+1)*a.C], p)
		a.ablatedSet(i, gs, z)
		audSoftmax(z, q)
		push += p[cueClass] - q[cueClass]
		gold := a.held.Gold[i]
		if gold == cueClass {
			continue
		}
		gain += q[gold] - p[gold]
		iv.conflict.Texts++
		if len(iv.conflict.Indices) < 200 {
			iv.conflict.Indices = append(iv.conflict.Indices, i)
		}
		before, after := a.pred[i], audArgmax(z)
		if before == gold {
			right++
		}
		if after == gold {
			rightMasked++
		}
		if before != after {
			ex := AuditExample{Split: "heldout", Index: i, Gold: labels[gold], Pred: labels[before], After: labels[after], Value: q[after]}
			at := a.firstCue(i, cues)
			ex.Start, ex.End = at, at+1
			ex.Snippet = a.held.textSnippet(a.m, i, at, 60)
			if after == gold {
				iv.conflict.Fixed++
				ex.Note = what + " fixes it"
				if len(fixed) < a.opt.Examples {
					fixed = append(fixed, ex)
				}
			} else if before == gold {
				iv.conflict.Broken++
				ex.Note = what + " breaks it"
				if len(broken) < a.opt.Examples {
					broken = append(broken, ex)
				}
			}
		}
	}
	if len(texts) > 0 {
		iv.push = push / float64(len(texts))
	}
	iv.pushTexts = len(texts)
	if iv.conflict.Texts > 0 {
		iv.conflictShare = float64(iv.conflict.Texts) / float64(len(texts))
		iv.conflictGain = gain / float64(iv.conflict.Texts)
		iv.harm = iv.conflictShare * iv.conflictGain
		iv.conflict.Accuracy = float64(right) / float64(iv.conflict.Texts)
		iv.conflict.AccuracyMasked = float64(rightMasked) / float64(iv.conflict.Texts)
	}
	iv.examples = append(fixed, broken...)
	return iv
}

func concentration(m *cnn.Model, e *filterEvidence) Concentration {
	c := Concentration{}
	for s, v := range e.slotMass {
		if v > e.slotMass[c.Slot] {
			c.Slot = s
		}
	}
	words := e.slotWords[c.Slot]
	var n int
	var top int32
	var topID int32 = -1
	for id, k := range words {
		n += int(k)
		if k > top || k == top && id < topID {
			top, topID = k, id
		}
	}
	if n == 0 {
		return c
	}
	for _, k := range words {
		p := float64(k) / float64(n)
		c.Entropy -= p * math.Log2(p)
	}
	c.Entropy = max(0, c.Entropy)
	if n > 1 {
		c.Normalized = c.Entropy / math.Log2(float64(n))
	}
	c.TopWord = wordOf(m, topID)
	c.TopShare = float64(top) / float64(n)
	return c
}

// categories classifies the filter's top n-grams (from its profile) and
// adds the boilerplate share of its above-threshold windows.
func (a *auditor) categories(g int) ([]AuditNgram, []CategoryShare) {
	pr := &a.prof.Filters[g]
	var ngrams []AuditNgram
	weight := map[string]int{}
	examples := map[string][]string{}
	total := 0
	for _, n := range pr.TopNgrams {
		an := AuditNgram{Tokens: n.Tokens, Slots: n.Slots, Activation: n.Activation, Count: n.Count, Categories: NgramCategories(n.Tokens)}
		ngrams = append(ngrams, an)
		total += n.Count
		for _, c := range an.Categories {
			weight[c] += n.Count
			if len(examples[c]) < 3 {
				examples[c] = append(examples[c], joinTokens(n.Tokens))
			}
		}
	}
	var cats []CategoryShare
	for _, c := range []string{CatNumberDate, CatEmailURL, CatPlaceholder, CatMarkup} {
		if weight[c] > 0 {
			cats = append(cats, CategoryShare{Category: c, Share: float64(weight[c]) / float64(total), Ngrams: examples[c]})
		}
	}
	if e := &a.ev[g]; e.boiler > 0 {
		cats = append(cats, CategoryShare{Category: CatBoilerplate, Share: float64(e.boiler) / float64(e.above)})
	}
	return ngrams, cats
}

func joinTokens(t []string) string {
	s := ""
	for i, w := range t {
		if i > 0 {
			s += " "
		}
		s += w
	}
	return s
}

// audParallel calls fn(i) for i in 0 … n−1 from up to workers goroutines.
func audParallel(n, workers int, fn func(i int)) {
	var next atomic.Int64
	var wg sync.WaitGroup
	for range min(max(1, workers), max(1, n)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				i := int(next.Add(1)) - 1
				if i >= n {
					return
				}
				fn(i)
			}
		}()
	}
	wg.Wait()
}
