package audit

import (
	"cmp"
	"context"
	"slices"
)

// minCueTexts is the fewest texts of the selection half a cue must occur in
// for its reliance to be measured.
const minCueTexts = 5

// MinCueTexts is minCueTexts for those who word the audit: below it a
// half gives no reliance figure and no word part of a cue (Filters).
const MinCueTexts = minCueTexts

// minConfidenceDrop is the smallest mean drop in a cue's label probability
// that the audit reports as the model's confidence resting on the cue
// (Candidate.ConfidenceOnly): a drop of a hundredth, the smallest a
// three-decimal figure shows as more than noise in the last digit. A drop
// below it may pass its sign test (a model sure of every text moves each
// probability a little, the same way) without being worth a reader's
// attention. Common practice, no source: a display threshold, not a test.
const minConfidenceDrop = 0.01

// measure chooses the cues whose reliance is measured and measures it on
// the selection half.
func (a *auditor) measure(ctx context.Context, cands []*Candidate) ([]*Candidate, error) {
	eligible := func(c *Candidate) bool { return len(texts(c.selOcc)) >= minCueTexts }
	for _, c := range cands {
		if c.Mark != "" && len(c.selOcc)+len(c.confOcc) == 0 {
			return nil, inputErrorf("audit: the marked cue %q never occurs in the %s: its reliance cannot be measured there; give a test split that holds it, or remove its mark",
				c.Text, a.sel.name("test"))
		}
	}
	chosen := map[*Candidate]bool{}
	var list []*Candidate
	take := func(c *Candidate) {
		if !chosen[c] && eligible(c) {
			chosen[c] = true
			list = append(list, c)
		}
	}
	for _, c := range cands {
		if c.Mark != "" {
			take(c)
		}
	}
	byP := slices.Clone(cands)
	slices.SortStableFunc(byP, func(x, y *Candidate) int { return cmp.Compare(x.Association.P, y.Association.P) })
	byA := slices.Clone(cands)
	slices.SortStableFunc(byA, func(x, y *Candidate) int { return cmp.Compare(artifactWeight(y), artifactWeight(x)) })
	for k := 0; len(list) < a.opt.Measured && (k < len(byP) || k < len(byA)); k++ {
		if k < len(byA) {
			take(byA[k])
		}
		if k < len(byP) && len(list) < a.opt.Measured {
			take(byP[k])
		}
	}
	if len(list) > 0 && len(a.neutral) == 0 {
		return nil, inputErrorf("audit: no word of the %s is equally common in every label (in 20 texts or more): the audit has no neutral words to edit in; give more training texts",
			a.train.name("training"))
	}
	for k, c := range list {
		a.progress("reliance", k, len(list))
		r, err := a.job(c, a.sel, a.selIdx, a.selBase, c.selOcc, "selection").measure(ctx, a.st, a.opt.Workers)
		if err != nil {
			return nil, err
		}
		c.Reliance = r
	}
	a.progress("reliance", len(list), len(list))
	ps := make([]float64, len(list))
	for k, c := range list {
		ps[k] = c.Reliance.P
	}
	for k, q := range BenjaminiHochberg(ps) {
		list[k].RelianceQ = q
	}
	return list, nil
}

// job is the reliance measurement of cue c on one half; index maps the
// half's texts to the held-out split's.
func (a *auditor) job(c *Candidate, half Data, index []int, base *basePass, occ []span, which string) *relianceJob {
	return &relianceJob{key: c.Text + "/" + which, class: c.Class, occ: occ, half: half, index: index, base: base, neutral: a.neutral,
		draws: a.opt.Draws, maxTexts: a.opt.MaxTexts, minTexts: minCueTexts, boot: a.opt.Bootstrap, seed: a.opt.Seed, labels: a.labels,
		vocab: a.vocab, examples: a.opt.Examples}
}

// relied: the selection half shows the model relies on the cue.
func (a *auditor) relied(c *Candidate) bool {
	return c.Reliance != nil && c.RelianceQ <= a.opt.RelianceAlpha && c.Reliance.LabelDrop.Estimate > 0
}

// ArtifactLike reports whether the cue is treated as how the data was
// collected: marked artifact, or unmarked with its measured
// artifact-likeness at the threshold or above.
func (c *Candidate) ArtifactLike() bool {
	return c.Mark == MarkArtifact || c.Mark != MarkTask && c.ArtifactLikeness >= ArtifactThreshold
}

// artifactWeight is the cue's artifact-likeness in the ranking: 1 for a
// cue the user marked artifact, else the measured figure.
func artifactWeight(c *Candidate) float64 {
	if c.Mark == MarkArtifact {
		return 1
	}
	return c.ArtifactLikeness
}

// result scores the cues and sorts them into the three lists.
func (a *auditor) result(cands, measured []*Candidate) *Result {
	res := &Result{Labels: a.labels, TrainTexts: a.train.Len(), HeldoutTexts: a.sel.Len() + a.conf.Len(),
		SelectionTexts: a.sel.Len(), ConfirmationTexts: a.conf.Len(), Test: a.opt.Test, Correction: a.opt.Correction,
		Alpha: a.opt.Alpha, Tests: a.assoc.tests, Cutoff: a.assoc.cutoff, MinSupport: a.opt.MinSupport,
		Associated: len(cands), Measured: len(measured), ArtifactFormula: ArtifactFormula, ScoreFormula: ScoreFormula,
		ModelFile: a.opt.ModelFile, TrainFile: a.opt.TrainFile, HeldoutFile: a.opt.HeldoutFile,
		Ranked: []Candidate{}, Task: []Candidate{}, Selection: a.selIdx, Confirmation: a.confIdx}
	var ranked, task, others []*Candidate
	for _, c := range cands {
		if c.Reliance != nil {
			c.Score = max(0, c.Reliance.LabelDrop.Estimate) * artifactWeight(c)
		}
		switch {
		case c.Reliance != nil && c.ArtifactLike():
			c.Verdict = VerdictNotRelied
			if a.relied(c) {
				c.Verdict = VerdictUnconfirmed // until the confirmation half confirms it
			}
			ranked = append(ranked, c)
		case c.Reliance != nil && (a.relied(c) || c.Mark == MarkTask):
			c.Verdict = VerdictTask
			task = append(task, c)
		default:
			c.Verdict = VerdictOther
			if c.Reliance == nil {
				c.Verdict = VerdictUnmeasured
			}
			others = append(others, c)
		}
	}
	slices.SortStableFunc(ranked, func(x, y *Candidate) int {
		if x.Score != y.Score {
			return cmp.Compare(y.Score, x.Score)
		}
		if wx, wy := artifactWeight(x), artifactWeight(y); wx != wy {
			return cmp.Compare(wy, wx)
		}
		return cmp.Compare(x.Association.P, y.Association.P)
	})
	slices.SortStableFunc(task, func(x, y *Candidate) int {
		return cmp.Compare(y.Reliance.LabelDrop.Estimate, x.Reliance.LabelDrop.Estimate)
	})
	slices.SortStableFunc(others, func(x, y *Candidate) int { return cmp.Compare(x.Association.P, y.Association.P) })
	// The confirmation may move a cue among the first Top; all artifact-like
	// cues measured are confirmed, and the list is cut after the order by
	// verdict (confirm).
	for _, c := range ranked {
		res.Ranked = append(res.Ranked, *c)
	}
	res.Task = firstAndMarked(task, a.opt.Top)
	res.Others = firstAndMarked(others, a.opt.Top)
	return res
}

// confirmedTask keeps the cues of task (measured on the confirmation half)
// that the confirmation half confirms the model relies on, by the rule of
// the cues acted on: the sign test significant after Benjamini–Hochberg
// over task's cues, the 95% interval of the label's probability drop
// above 0, and the flips confirmed (Reliance.FlipsConfirmed). A cue a
// person marked task stays listed (a person's verdict is always shown),
// with Relied false when unconfirmed.
func (a *auditor) confirmedTask(task []Candidate) []Candidate {
	ps := make([]float64, len(task))
	for k := range task {
		ps[k] = task[k].Confirmed.P
	}
	out := []Candidate{}
	for k, q := range BenjaminiHochberg(ps) {
		c := task[k]
		cr := c.Confirmed
		c.ConfirmedQ = q
		c.Relied = cr.Measured > 0 && q <= a.opt.RelianceAlpha && cr.LabelDrop.Low > 0 && cr.FlipsConfirmed()
		if c.Relied || c.Mark != "" {
			out = append(out, c)
		}
	}
	return out
}

// firstAndMarked is the first top cues of cs and every marked cue after
// them: a person's verdict is always shown.
func firstAndMarked(cs []*Candidate, top int) []Candidate {
	out := []Candidate{}
	for k, c := range cs {
		if k < top || c.Mark != "" {
			out = append(out, *c)
		}
	}
	return out
}

// confirm measures the listed cues on the confirmation half, decides which
// artifact-like cues are acted on (the selection half's reliance confirmed
// there, Benjamini–Hochberg over the cues put to the test), and finds
// their keyed filters on the selection half.
func (a *auditor) confirm(ctx context.Context, res *Result) error {
	// Measured on the confirmation half: every cue that may be acted on,
	// and the first Top of each list (the rest are cut below).
	var todo []*Candidate
	for k := range res.Ranked {
		if c := &res.Ranked[k]; k < a.opt.Top || c.Verdict == VerdictUnconfirmed || c.Mark != "" {
			todo = append(todo, c)
		}
	}
	for k := range res.Task {
		todo = append(todo, &res.Task[k])
	}
	for k, c := range todo {
		a.progress("confirmation", k, len(todo))
		r, err := a.job(c, a.conf, a.confIdx, a.confBase, c.confOcc, "confirmation").measure(ctx, a.st, a.opt.Workers)
		if err != nil {
			return err
		}
		c.Confirmed = r
	}
	a.progress("confirmation", len(todo), len(todo))
	// The cues put to the test: artifact-like and relied on in the
	// selection half. On the confirmation half each must lower its label's
	// probability (the sign test, Benjamini–Hochberg over the cues put to
	// the test) and change predictions beyond the control
	// (Reliance.FlipsConfirmed). One that passes the first
	// and not the second is not acted on, but marked ConfidenceOnly when its
	// drop is at least minConfidenceDrop: the story says what its flips'
	// interval leaves open.
	var put []int
	for k := range res.Ranked {
		if res.Ranked[k].Verdict == VerdictUnconfirmed {
			put = append(put, k)
		}
	}
	ps := make([]float64, len(put))
	shifted := make([]*Candidate, len(put))
	for i, k := range put {
		ps[i] = res.Ranked[k].Confirmed.P
		shifted[i] = &res.Ranked[k]
	}
	a.confirmedShifts(shifted)
	for i, q := range BenjaminiHochberg(ps) {
		res.Ranked[put[i]].settle(q, a.opt.RelianceAlpha)
	}
	res.Task = a.confirmedTask(res.Task)
	// The cues acted on first, then those relied on in choosing only, then
	// the rest; by score within each.
	order := map[string]int{VerdictActed: 0, VerdictUnconfirmed: 1, VerdictNotRelied: 2}
	slices.SortStableFunc(res.Ranked, func(x, y Candidate) int { return cmp.Compare(order[x.Verdict], order[y.Verdict]) })
	ranked := make([]*Candidate, len(res.Ranked))
	for k := range res.Ranked {
		ranked[k] = &res.Ranked[k]
	}
	res.Ranked = firstAndMarked(ranked, a.opt.Top)
	for k := range res.Ranked {
		c := &res.Ranked[k]
		if c.Verdict == VerdictNotRelied {
			continue
		}
		c.Filters = &Filters{Keyed: keyedFilters(a.m, a.selBase, c.selOcc, c.Class)}
		if ws := a.cueWords(c); len(ws) > 0 {
			c.Filters.Words, c.Filters.WordTexts, c.Filters.WordPart = wordNames(a.m, ws), len(texts(c.confOcc)), a.wordPart(c, ws)
		}
		if len(c.Filters.Keyed) > 0 {
			c.Filters.Ablation = ablate(a.m, a.confBase, a.conf.Gold, c.Filters.Keyed, a.cueWords(c), texts(c.confOcc))
		}
	}
	return nil
}

// settle sets the verdict of a cue put to the test on the confirmation
// half from the adjusted p-value q of its drop's sign test: acted on when
// q is at most alpha, the 95% interval of the label's probability drop
// lies above 0 and the flips are confirmed (Reliance.FlipsConfirmed; as
// for a cue that reads like the task, confirmedTask); ConfidenceOnly when
// only the flips fail and the mean drop is at least minConfidenceDrop;
// else it stays as it is.
// c.Confirmed must be set.
func (c *Candidate) settle(q, alpha float64) {
	c.ConfirmedQ = q
	drop := c.Confirmed.LabelDrop
	if q > alpha || !(drop.Low > 0) {
		return
	}
	if c.Confirmed.FlipsConfirmed() {
		c.Verdict, c.Relied = VerdictActed, true
	} else if drop.Estimate >= minConfidenceDrop {
		c.ConfidenceOnly = true
	}
}
