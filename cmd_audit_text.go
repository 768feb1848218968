package main

import (
	"bufio"
	"cmp"
	"fmt"
	"io"
	"strconv"
	"strings"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/wording"
	"telltale/report"
)

// auditView is what the text of an audit shows: the audit (and what the
// options added) with the names the text uses.
type auditView struct {
	*auditJSON
	o       *auditOptions
	heldout string    // the held-out texts, named
	priors  []float64 // the labels' shares of the training split
	command string    // this audit's command line, to extend with one option
}

func newAuditView(o *auditOptions, src auditSource, priors []float64, out *auditJSON) *auditView {
	es := src.es
	v := &auditView{auditJSON: out, o: o, priors: priors}
	switch {
	case es.name == "all":
		v.heldout = "texts of all of " + o.data + " (they may include texts the model was trained on)"
	case o.test != "":
		v.heldout = "texts of the test file " + o.test
	case src.heldoutFile() != "":
		v.heldout = "texts of the test file the model was trained with, " + src.heldoutFile()
	default:
		v.heldout = "texts of the test split train held out of " + o.data
	}
	if len(out.Warnings) > 0 {
		v.heldout += " (read the warnings below)"
	}
	args := []string{"telltale", "audit", "--model", o.model, "--data", o.data}
	for _, opt := range []struct{ name, value string }{{"test", o.test}, {"text-col", o.read.TextCol}, {"label-col", o.read.LabelCol},
		{"format", o.read.Format}, {"mail", o.read.Mail}, {"relabel", o.read.Relabel}, {"marks", o.marks}} {
		if opt.value != "" {
			args = append(args, "--"+opt.name, opt.value)
		}
	}
	v.command = shellJoin(args)
	return v
}

// writeAuditText writes the audit for a person: what was audited, the
// story, the two lists of cues with their evidence, the stability and
// retraining the options asked for, the commands that act on it, and how
// the numbers are made.
func writeAuditText(w io.Writer, v *auditView) error {
	bw := bufio.NewWriter(w)
	r := v.Result
	fmt.Fprintf(bw, "Cue audit of %s: association on the %s training texts of %s; reliance on the %s %s, halved at random (seed %d) "+
		"into %s that choose the cues and %s that confirm them: every figure below comes from the confirming half unless it says otherwise.\n\n", v.o.model, count(r.TrainTexts), v.o.data, count(r.HeldoutTexts), v.heldout,
		v.o.seed, count(r.SelectionTexts), count(r.ConfirmationTexts))
	for _, w := range v.Warnings {
		fmt.Fprintf(bw, "Warning: %s.\n\n", strings.TrimSuffix(w, "."))
	}
	fmt.Fprintf(bw, "%s\n", v.Story)
	if line := measuredLine(r, v.o.measure); line != "" {
		fmt.Fprintf(bw, "\n%s\n", line)
	}
	v.writeList(bw, fmt.Sprintf("Cues that look like how the data was collected (%d), those acted on first, then by reliance × artifact-likeness", len(r.Ranked)), r.Ranked)
	v.writeList(bw, fmt.Sprintf("Relied on, reads like the task (%d): judge these yourself and mark any that is an artifact", len(r.Task)), r.Task)
	v.writeStability(bw)
	v.writeRetrained(bw)
	v.writeActions(bw)
	fmt.Fprintf(bw, "\nHow the numbers are made.\n")
	for _, m := range report.AuditMethod(r) {
		fmt.Fprintf(bw, "  %s\n", m)
	}
	return bw.Flush()
}

// measuredLine says how many of the associated cues had their reliance
// measured (at most limit, --measure), and of those that were not, which
// no list of the text shows, how many score as artifact-like; "" when no
// cue is associated. That count is exact when the audit lists every cue
// not measured (among its others, cut at --top), else it is of the most
// associated of them, and worded so.
func measuredLine(r *audit.Result, limit int) string {
	if r.Associated == 0 {
		return ""
	}
	assoc := wording.Grouped(r.Associated, "cue", "cues") + " associated with a label in the training texts"
	rest := r.Associated - r.Measured
	if rest == 0 {
		return fmt.Sprintf("All %s had their reliance measured.", assoc)
	}
	listed, like := 0, 0
	for i := range r.Others {
		if c := &r.Others[i]; c.Verdict == audit.VerdictUnmeasured {
			listed++
			if c.ArtifactLike() {
				like++
			}
		}
	}
	score := fmt.Sprintf("%s %s as artifact-like (%.2f or more)", count(like), wording.Noun(like, "scores", "score"), audit.ArtifactThreshold)
	if like == 0 {
		score = fmt.Sprintf("none scores as artifact-like (%.2f or more)", audit.ArtifactThreshold)
	}
	line := fmt.Sprintf("Of the %s, %s had %s reliance measured (--measure %d); the other %s are in no list below, ", assoc, count(r.Measured),
		wording.Noun(r.Measured, "its", "their"), limit, count(rest))
	if listed < rest {
		line += fmt.Sprintf("and of the %s most associated of them (under others in the JSON, which a larger --top lengthens) %s.",
			count(listed), score)
	} else {
		line += fmt.Sprintf("and of them %s.", score)
	}
	if r.Measured < limit {
		// Every cue frequent enough was measured (audit's measure stops at
		// the limit only).
		return line + " They occur in too few of the choosing half's texts to be measured, so a larger --measure would not measure them."
	}
	return line + " A larger --measure N measures more of them (the marked cues first, then the most associated and the most artifact-like by turns), and takes longer."
}

// writeActions writes the commands that act on the audit here: keep the
// verdicts, retrain, write the masked model.
func (v *auditView) writeActions(w io.Writer) {
	var acted, unmarked []string
	for _, c := range v.Ranked {
		if c.Verdict == audit.VerdictActed {
			acted = append(acted, c.Text)
			if c.Mark != audit.MarkArtifact {
				unmarked = append(unmarked, "--mark-artifact", c.Text)
			}
		}
	}
	base := strings.TrimSuffix(v.o.model, ".tt")
	type step struct{ say, args string }
	var steps []step
	if len(unmarked) > 0 {
		steps = append(steps, step{"keep the verdict with the model (in " + v.MarksFile + ")", shellJoin(unmarked)})
	}
	if len(acted) > 0 && v.Retrained == nil {
		steps = append(steps, step{"retrain without the cues and compare both models, with and without them, on the confirming half, which took no part in choosing them",
			shellJoin([]string{"--retrain", "--retrain-out", base + "-without.tt"})})
	}
	if v.Action.Suggested() && v.MaskedModel == "" {
		steps = append(steps, step{"write a copy with " + maskedWhatAudit(&v.Action) + ", which helped on the confirming half",
			shellJoin([]string{"--masked-out", base + "-masked.tt"})})
	}
	if len(steps) == 0 {
		return
	}
	fmt.Fprintf(w, "\nTo act on it from the command line:\n")
	for _, s := range steps {
		fmt.Fprintf(w, "  %s:\n    %s %s\n", s.say, v.command, s.args)
	}
}

// writeList writes one list of cues with their three lines of evidence.
func (v *auditView) writeList(w io.Writer, title string, cs []audit.Candidate) {
	fmt.Fprintf(w, "\n%s:\n", title)
	if len(cs) == 0 {
		fmt.Fprintf(w, "  none.\n")
	}
	for i := range cs {
		ev := report.DescribeCue(&cs[i], v.Result, v.priors)
		fmt.Fprintf(w, "\n%2d. %s → %s: %s\n", i+1, ev.Name, ev.Label, ev.Verdict)
		line := func(what, text string) { fmt.Fprintf(w, "    %-18s %s\n", what, text) }
		line("association", ev.Association)
		line("reliance", cmpOr(ev.Reliance, "not measured"))
		line("artifact-likeness", ev.Artifact)
		for _, s := range ev.Signals {
			line("", "· "+s)
		}
		if ev.Shift != "" {
			line("label share", ev.Shift)
		}
		if ev.Filters != "" {
			line("filters", ev.Filters)
		}
		for k, e := range ev.Examples {
			line(map[bool]string{true: "for example", false: ""}[k == 0], e)
		}
		line("to mark it", shellQuote(ev.Words))
	}
}

// writeStability writes the cues over the audits of several models.
func (v *auditView) writeStability(w io.Writer) {
	if len(v.Stability) == 0 {
		return
	}
	fmt.Fprintf(w, "\nOver %d models (this one and %d more of its recipe): a cue is stable when acted on in at least %d of the audits.\n",
		v.Stability[0].Models, v.Stability[0].Models-1, v.StableIn)
	shown := 0
	for _, s := range v.Stability {
		if s.Found == 0 {
			continue // listed, acted on in none: counted below
		}
		shown++
		ranks := make([]string, len(s.Ranks))
		for i, r := range s.Ranks {
			ranks[i] = fmt.Sprint(r)
			if r == 0 {
				ranks[i] = "–"
			}
		}
		stable := ""
		if s.Stable {
			stable = ", stable"
		}
		fmt.Fprintf(w, "  acted on in %d of %d (ranks %s)%s: %s → %s\n", s.Found, s.Models, strings.Join(ranks, " "), stable, shellQuote(s.Text), s.Label)
	}
	if shown == 0 {
		fmt.Fprintf(w, "  No cue was acted on in any of the %d audits.\n", v.Stability[0].Models)
	}
	if none := len(v.Stability) - shown; none > 0 {
		where := "the JSON's stability lists them"
		if v.o.stabilityPath() != "" {
			where = "the JSON's stability and " + v.o.stabilityPath() + " list them"
		}
		fmt.Fprintf(w, "  Not shown: %s listed as artifact-like in an audit but acted on in none (%s).\n",
			wording.Count(none, "more cue", "more cues"), where)
	}
}

// writeRetrained writes --retrain's comparison, on the confirming half.
func (v *auditView) writeRetrained(w io.Writer) {
	rt := v.Retrained
	if rt == nil {
		return
	}
	fmt.Fprintf(w, "\nRetrained without %s (%s taken out of the training split); both models compared on the %s confirming test texts, "+
		"which took no part in choosing the cues (%s taken out of them):\n",
		wording.Count(len(rt.Patterns), "cue", "cues"), matches(rt.Removed), count(rt.Texts), matches(rt.HeldoutRemoved))
	if words := report.RecipeMaskWords(rt); words != "" {
		fmt.Fprintf(w, "  %s\n", words)
	}
	for _, p := range []struct {
		what string
		mp   audit.ModelPair
	}{{"as they are", rt.Original}, {"without the cues", rt.Counterfactual}} {
		fmt.Fprintf(w, "  %s: accuracy %s with this model, %s retrained; %d right only before, %d only after (two-sided exact McNemar p = %.2g: %s)\n",
			p.what, accInterval(p.mp.Before), accInterval(p.mp.After), p.mp.OnlyBefore, p.mp.OnlyAfter, p.mp.P, p.mp.Direction(audit.RetrainAlpha))
	}
	if v.RetrainedModel != "" {
		fmt.Fprintf(w, "  The retrained model is in %s.\n", v.RetrainedModel)
	}
}

// matches writes a count of pattern matches: "1 match", "1,234 matches".
func matches(n int) string {
	return count(n) + map[bool]string{true: " match", false: " matches"}[n == 1]
}

func accInterval(x audit.Interval) string {
	return fmt.Sprintf("%.3f (%.3f–%.3f)", x.Estimate, x.Low, x.High)
}

// count writes n with a comma every three digits.
func count(n int) string {
	s := fmt.Sprint(n)
	for i := len(s) - 3; i > 0 && s[i-1] != '-'; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return s
}

// shellJoin quotes each argument for a POSIX shell and joins them.
func shellJoin(args []string) string {
	q := make([]string, len(args))
	for i, a := range args {
		q[i] = shellQuote(a)
	}
	return strings.Join(q, " ")
}

// shellQuote quotes s for a POSIX shell when it holds anything but letters,
// digits and . _ / : , = + - @ %.
func shellQuote(s string) string {
	if s != "" && strings.Trim(s, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789._/:,=+-@%") == "" {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}

// auditSource is what the audit's faces (audit, report) know of the files
// an audit read, for the commands its story prints and the advice of its
// messages.
type auditSource struct {
	model, data, test string
	read              *readOptions
	vectors           string
	es                *evalSet
	m                 *cnn.Model
}

// sameData reports whether --data is the data the model was trained on (its
// split record matches), so that its splits can be made again.
func (s auditSource) sameData() bool { return s.es.dev != nil && s.m.Info.Splits != nil }

// heldoutFile is the file the held-out texts were read from: --test, or
// the test file the model was trained with when --data is its data; ""
// when they are a share of --data.
func (s auditSource) heldoutFile() string {
	switch {
	case s.test != "":
		return s.test
	case s.sameData() && s.es.name == "test":
		return s.m.Info.Splits.TestFile
	}
	return ""
}

// heldoutShare reports whether the held-out texts are the test split held
// out of --data (not a file of their own).
func (s auditSource) heldoutShare() bool {
	return s.test == "" && s.sameData() && s.m.Info.Splits.TestFile == ""
}

// retrainCommands renders, for a POSIX shell, the story's commands that
// retrain without the cues: printf writes the patterns to MODEL.cues, one a
// line, and telltale train trains the model's recipe again on its own
// splits of --data with them taken out, into MODEL-without.tt (MODEL the
// model file's name without .tt). The patterns the model's recipe took out
// already (train --mask-tokens, cnn.TrainConfig.MaskTokens) come first in
// the file, then the cues not among them, so that the line trains the
// model's whole recipe with the mask audit --retrain records
// (audit.Retrain: the recipe's patterns, then the cues).
func (s auditSource) retrainCommands(patterns []string) []string {
	if r := s.m.Info.Recipe; r != nil {
		patterns = audit.JoinPatterns(r.MaskTokens, patterns)
	}
	base := strings.TrimSuffix(s.model, ".tt")
	cues, out := base+".cues", base+"-without.tt"
	args := append(s.trainArgs(), "--mask-tokens", cues, "--out", out)
	cmds := []string{"printf '%s\\n' " + shellJoin(patterns) + " > " + shellQuote(cues), shellJoin(args)}
	if extra := unflaggedSettings(s.m); len(extra) > 0 {
		// A shell comment, so the lines still run as they are, and nobody
		// takes the command for the model's whole recipe.
		cmds = append(cmds, "# train has no option for this model's "+strings.Join(extra, ", ")+
			": the line above trains without them")
	}
	return cmds
}

// unflaggedSettings names the settings of m's recipe that differ from
// train's default and that no option of train gives (settings only the
// Go API sets), each as its JSON name and value.
func unflaggedSettings(m *cnn.Model) []string {
	var out []string
	add := func(differs bool, name string, value any) {
		if differs {
			out = append(out, fmt.Sprintf("%s %v", name, value))
		}
	}
	if ch := m.Config.Chars; ch != nil {
		add(ch.Dim != cnn.DefaultCharDim, "char_dim", ch.Dim)
		add(ch.MaxChars != cnn.DefaultMaxChars, "max_chars", ch.MaxChars)
	}
	k, dk := m.Tokenizer, cnn.DefaultRecipe().Tokenizer
	add(k.KeepForm != dk.KeepForm, "keep_form", k.KeepForm)
	add(k.MaxVocab != dk.MaxVocab, "max_vocab", k.MaxVocab)
	// A trained tokenizer records the size it used: 0 reads as the default.
	subwordSize := func(n int) int { return cmp.Or(n, corpus.DefaultSubwordSize) }
	add(k.Subword && subwordSize(k.SubwordSize) != subwordSize(dk.SubwordSize), "subword_size", k.SubwordSize)
	r := m.Info.Recipe
	if r == nil {
		return out
	}
	// As recipeArgs: the recorded recipe has the optimizer's defaults
	// filled in.
	dt := cnn.DefaultRecipe().Train
	dt.Optimizer, dt.LR = r.Optimizer, 0
	dt, _ = dt.WithDefaults()
	add(r.Beta1 != dt.Beta1, "beta1", r.Beta1)
	add(r.Beta2 != dt.Beta2, "beta2", r.Beta2)
	add(r.Rho != dt.Rho, "rho", r.Rho)
	add(r.Eps != dt.Eps, "eps", r.Eps)
	add(r.EmbedInit != dt.EmbedInit, "embed_init", r.EmbedInit)
	add(r.WeightDecay != dt.WeightDecay, "weight_decay", r.WeightDecay)
	add(r.AverageLast != dt.AverageLast, "average_last", r.AverageLast)
	add(r.StopOn != dt.StopOn, "stop_on", r.StopOn)
	add(r.EmbedDropout != dt.EmbedDropout, "embed_dropout", r.EmbedDropout)
	add(r.HeadWarmup != dt.HeadWarmup, "head_warmup", r.HeadWarmup)
	add(r.LRDecay != dt.LRDecay, "lr_decay", r.LRDecay)
	add(r.WideSparse != dt.WideSparse, "wide_sparse", r.WideSparse)
	add(r.WideDecay != dt.WideDecay, "wide_decay", r.WideDecay)
	add(r.WideNBRate != dt.WideNBRate, "wide_nb_rate", r.WideNBRate)
	add(r.WideFitFolds != dt.WideFitFolds, "wide_fit_folds", r.WideFitFolds)
	add(r.WideFitScale != dt.WideFitScale, "wide_fit_scale", r.WideFitScale)
	add(r.WideFitShrink != dt.WideFitShrink, "wide_fit_shrink", r.WideFitShrink)
	add(r.WeightAverage != dt.WeightAverage, "weight_average", r.WeightAverage)
	return out
}

// trainArgs is the train command line that makes the model's splits of
// --data again (its split record, when --data is the model's data; else
// --data with --test as given) and reads the data as the audit did, with
// every recipe option whose value the model records differently from
// train's default.
func (s auditSource) trainArgs() []string {
	args := []string{"telltale", "train", "--data", s.data}
	opt := func(name, value string) { args = append(args, "--"+name, value) }
	def := cnn.DefaultRecipe()
	seed := def.Train.Seed
	if r := s.m.Info.Recipe; r != nil {
		seed = r.Seed
	}
	if rec := s.m.Info.Splits; s.sameData() {
		seed = rec.Seed
		switch {
		case readOnce(rec.DevFile, rec.DevPipe):
			opt("dev", "DEV-FILE") // read once at training: the user has the file
		case rec.DevFile != "":
			opt("dev", rec.DevFile)
		case rec.DevFrac != cnn.DefaultDevFrac:
			opt("dev-frac", fmtFloat(rec.DevFrac))
		}
		switch {
		case rec.TestFile != "" && s.test != "" && (absPath(s.test) == rec.TestFile || readOnce(rec.TestFile, rec.TestPipe)):
			opt("test", s.test)
		case readOnce(rec.TestFile, rec.TestPipe):
			opt("test", "TEST-FILE")
		case rec.TestFile != "":
			opt("test", rec.TestFile)
		case rec.TestFrac != cnn.DefaultTestFrac:
			opt("test-frac", fmtFloat(rec.TestFrac))
		}
	} else if s.test != "" {
		opt("test", s.test)
	}
	if seed != def.Train.Seed {
		opt("seed", strconv.FormatUint(seed, 10))
	}
	args = append(args, s.read.args()...)
	args = append(args, recipeArgs(s.m)...)
	if s.vectors != "" {
		opt("vectors", s.vectors)
	}
	return args
}

// recipeArgs are train's options for every setting of m's recipe that
// differs from train's default (cnn.DefaultRecipe).
func recipeArgs(m *cnn.Model) []string {
	var args []string
	opt := func(differs bool, name, value string) {
		if differs {
			args = append(args, "--"+name, value)
		}
	}
	// A boolean option takes its value after '=': "--lower false" would
	// leave "false" as an argument of its own.
	boolOpt := func(differs bool, name string, value bool) {
		if differs {
			args = append(args, "--"+name+"="+strconv.FormatBool(value))
		}
	}
	def := cnn.DefaultRecipe()
	c, dc := m.Config, def.Model
	dim := c.Dim
	if ch := c.Chars; ch != nil {
		// --dim is the word table's; the character part comes beside it.
		dim -= ch.Filters
		args = append(args, "--chars")
		opt(ch.Filters != cnn.DefaultCharFilters, "char-maps", strconv.Itoa(ch.Filters))
		opt(ch.Width != cnn.DefaultCharWidth, "char-width", strconv.Itoa(ch.Width))
	}
	opt(dim != dc.Dim, "dim", strconv.Itoa(dim))
	opt(joinInts(c.Widths) != joinInts(dc.Widths), "widths", joinInts(c.Widths))
	opt(c.Filters != dc.Filters, "maps", strconv.Itoa(c.Filters))
	opt(c.Dropout != dc.Dropout, "dropout", strconv.FormatFloat(float64(c.Dropout), 'g', -1, 32))
	opt(c.MaxNorm != dc.MaxNorm, "max-norm", strconv.FormatFloat(float64(c.MaxNorm), 'g', -1, 32))
	k, dk := m.Tokenizer, def.Tokenizer
	boolOpt(k.Lower != dk.Lower, "lower", k.Lower)
	opt(k.MinCount != dk.MinCount && k.MinCount > 0, "min-count", strconv.Itoa(k.MinCount))
	boolOpt(k.Subword != dk.Subword, "subword", k.Subword)
	opt(k.File != "", "tokenizer", k.File)
	if r := m.Info.Recipe; r != nil {
		// The model records its recipe with the optimizer's defaults filled
		// in: compare with train's default filled in the same way.
		dt := def.Train
		if r.Optimizer != def.Train.Optimizer {
			// Another optimizer's default rate, not the default recipe's.
			dt.Optimizer, dt.LR = r.Optimizer, 0
		}
		dt, _ = dt.WithDefaults()
		opt(r.Epochs != dt.Epochs, "epochs", strconv.Itoa(r.Epochs))
		opt(r.Batch != dt.Batch, "batch", strconv.Itoa(r.Batch))
		opt(r.Optimizer != def.Train.Optimizer, "optimizer", r.Optimizer)
		opt(r.LR != dt.LR, "lr", fmtFloat(r.LR))
		opt(r.MaxLen != dt.MaxLen, "max-len", strconv.Itoa(r.MaxLen))
		opt(r.Patience != dt.Patience, "patience", strconv.Itoa(max(0, r.Patience))) // negative: never stops, train's 0
		opt(r.KeepFrom != dt.KeepFrom, "keep-from", strconv.Itoa(r.KeepFrom))
		boolOpt(r.FreezeEmb != dt.FreezeEmb, "freeze", r.FreezeEmb)
		opt(r.TokenDropout != dt.TokenDropout, "token-dropout", fmtFloat(r.TokenDropout))
		opt(r.WordDropout != dt.WordDropout, "word-dropout", fmtFloat(r.WordDropout))
		opt(r.ClassWeight != dt.ClassWeight, "class-weight", cmp.Or(r.ClassWeight, classWeightNone))
	}
	boolOpt(c.Wide != dc.Wide, "wide", c.Wide)
	if r := m.Info.Recipe; c.Wide && r != nil && r.WideLR != cnn.DefaultWideLR {
		// The recipe's 0 means the rest's rate, which train writes as 1.
		opt(true, "wide-lr", fmtFloat(cmp.Or(r.WideLR, 1)))
	}
	if c.Wide { // --wide=false turns the bigram weights and the fitted start off too
		boolOpt(c.WideBigrams != dc.WideBigrams, "wide-bigrams", c.WideBigrams)
		if r := m.Info.Recipe; r != nil {
			boolOpt(r.WideFit != def.Train.WideFit, "wide-fit", r.WideFit)
			// Without a fitted start train records no C (--wide-fit-c is
			// refused without --wide-fit).
			opt(r.WideFit && r.WideFitC != def.Train.WideFitC, "wide-fit-c", fmtFloat(r.WideFitC))
		}
	}
	return args
}

// fmtFloat writes x in the fewest digits that read back as x.
func fmtFloat(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

// maskedWhatAudit says what the audit's suggested mask does: "filters 3, 7
// masked", "kioskmail, tkref read as the unknown word by the word
// weights", or both joined by "and".
func maskedWhatAudit(act *audit.Action) string {
	var what []string
	if len(act.Mask) > 0 {
		what = append(what, "filters "+joinInts(act.Mask)+" masked")
	}
	if len(act.MaskWords) > 0 {
		what = append(what, strings.Join(act.MaskWords, ", ")+" read as the unknown word by the word weights")
	}
	return strings.Join(what, " and ")
}
