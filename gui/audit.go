package gui

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/data/binding"
	"fyne.io/fyne/v2/widget"

	"telltale/cnn"
	"telltale/explain"
)

// auditState is the result of the cue audit of the open model
// (explain.RunAudit) and the texts its examples point into.
type auditState struct {
	A       *explain.Audit
	suspect map[int]int // global filter → index into A.Filters
	// Texts of the two splits the audit read, by index (its examples name
	// a split and an index).
	Train, Heldout []string
}

func newAuditState(a *explain.Audit, train, heldout []string) *auditState {
	as := &auditState{A: a, suspect: map[int]int{}, Train: train, Heldout: heldout}
	for i, s := range a.Filters {
		as.suspect[s.Filter] = i
	}
	return as
}

// suspectOf returns filter g's entry among the suspects, or nil.
func (a *auditState) suspectOf(g int) *explain.Suspect {
	if a == nil {
		return nil
	}
	if i, ok := a.suspect[g]; ok {
		return &a.A.Filters[i]
	}
	return nil
}

// suspicionOf is filter g's audit score as shown in lists, "—" without an
// audit or when g is not among the suspects.
func (a *auditState) suspicionOf(g int) string {
	if s := a.suspectOf(g); s != nil {
		return fmt.Sprintf("%.4f", s.Score)
	}
	return "—"
}

// cuesOf lists filter g's cue words, "" when it is not a suspect.
func (a *auditState) cuesOf(g int) string {
	if s := a.suspectOf(g); s != nil {
		return cueWords(s)
	}
	return ""
}

func cueWords(s *explain.Suspect) string {
	var ws []string
	for _, c := range s.Cues {
		ws = append(ws, c.Token)
	}
	return strings.Join(ws, " ")
}

// text returns the full text an audit example quotes.
func (a *auditState) text(ex explain.AuditExample) string {
	src := a.Heldout
	if ex.Split == "train" {
		src = a.Train
	}
	if ex.Index >= 0 && ex.Index < len(src) {
		return src[ex.Index]
	}
	return ex.Snippet
}

// flaggedCols are the columns of flaggedTokenRows.
var (
	flaggedCols   = []string{"token", "training texts", "label", "share", "z", "PMI", "held-out texts", "category"}
	flaggedWidths = []float32{130, 100, 130, 60, 70, 60, 100, 110}
)

// flaggedTokenRows lists the tokens the audit flagged, largest z first.
func flaggedTokenRows(a *auditState) [][]string {
	if a == nil {
		return nil
	}
	var rows [][]string
	for _, f := range a.A.Tokens {
		rows = append(rows, []string{f.Token, fmt.Sprint(f.Count), f.Label, fmt.Sprintf("%.3f", f.Share),
			fmt.Sprintf("%.2f", f.Z), fmt.Sprintf("%.3f", f.PMI), fmt.Sprint(f.Heldout), f.Category})
	}
	return rows
}

// auditSeed seeds the audit's counterfactual draws.
const auditSeed = 1

// auditTop is the number of suspects the window asks for.
const auditTop = 20

// auditNow shows the audit view and runs the cue audit.
func (st *State) auditNow() {
	st.tabs("Cue audit")
	st.runAudit(nil)
}

// runAudit runs the cue audit of the open model in the background: token
// statistics and filter evidence on the training split, interventions on
// the held-out split; then runs then, if not nil (also after a failure).
func (st *State) runAudit(then func()) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	if ms == nil || cs == nil {
		st.showError(errors.New("the audit needs a model and its data: train a model (Training view) or open one (File › Open model)"))
		if then != nil {
			then()
		}
		return
	}
	var prof *explain.Profiles
	if ps := itemGet(st.profiles); ps != nil {
		prof = ps.P
	}
	_ = st.status.Set("Running the cue audit…")
	st.start(taskAudit, true, func(ctx context.Context, report reporter) (func(), error) {
		maxLen := 0
		if r := ms.Model.Info.Recipe; r != nil {
			maxLen = r.MaxLen
		}
		tr, err := explain.NewAuditData(ms.Model, cs.Train, maxLen, 0)
		if err != nil {
			return then, fmt.Errorf("the training split does not fit this model: %w", err)
		}
		ho, err := explain.NewAuditData(ms.Model, cs.Test, maxLen, 0)
		if err != nil {
			return then, fmt.Errorf("the held-out split does not fit this model: %w", err)
		}
		a, err := explain.RunAudit(ctx, ms.Model, tr, ho,
			explain.AuditOptions{Profiles: prof, Table: ms.Table, Top: auditTop, Seed: auditSeed},
			func(stage string, done, total int) {
				report(done, total, fmt.Sprintf("Cue audit: %s, %d of %d", auditStages[stage], done, total))
			})
		if err != nil {
			return then, err
		}
		as := newAuditState(a, cs.Train.Texts(), cs.Test.Texts())
		return func() {
			if itemGet(st.model) == ms {
				st.audit.Set(as)
				_ = st.status.Set(fmt.Sprintf("Cue audit done: %d tokens flagged, %d filters scored, %d suspects listed.",
					len(a.Tokens), a.Candidates, len(a.Filters)))
			}
			if then != nil {
				then()
			}
		}, nil
	})
}

// auditStages names RunAudit's stages for the status bar.
var auditStages = map[string]string{
	"profile":        "profiling the filters",
	"evidence":       "weighing each filter's evidence",
	"heldout":        "masking each filter on the held-out split",
	"counterfactual": "substituting cue words",
}

// maskState is the masked copy of the open model and its held-out result.
type maskState struct {
	Filters []int // masked filters, ascending
	Model   *cnn.Model
	Eval    *evaluation
}

// applyMask evaluates a copy of the open model with filters masked
// (explain.MaskFilters), in the background, and hands the before/after
// result to done.
func (st *State) applyMask(filters []int, done func(*maskState)) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	if ms == nil || cs == nil {
		st.showError(errors.New("masking needs a model and its data: train or open a model first"))
		return
	}
	filters = append([]int(nil), filters...)
	sort.Ints(filters)
	_ = st.status.Set(fmt.Sprintf("Evaluating the model with %d filters masked…", len(filters)))
	st.start(taskMask, true, func(ctx context.Context, report reporter) (func(), error) {
		m, err := explain.MaskFilters(ms.Model, filters)
		if err != nil {
			return nil, err
		}
		masked := &modelState{Model: m, Enc: ms.Enc}
		ev, err := evaluate(masked, cs)
		if err != nil {
			return nil, err
		}
		mk := &maskState{Filters: filters, Model: m, Eval: ev}
		return func() {
			if itemGet(st.model) != ms {
				return
			}
			_ = st.status.Set(fmt.Sprintf("With %d filters masked: held-out accuracy %.3f (was %.3f), macro-F1 %.3f (was %.3f).",
				len(filters), ev.Metrics.Accuracy, ms.Eval.Metrics.Accuracy, ev.Metrics.MacroF1, ms.Eval.Metrics.MacroF1))
			done(mk)
		}, nil
	})
}

// Columns of the suspect table.
var (
	suspectCols = []string{"mask", "rank", "filter", "votes for", "cue words", "score", "flagged share", "push",
		"conflict share", "conflict gain", "harm", "Δ macro-F1 masked", "flip rate"}
	suspectWidths = []float32{46, 44, 50, 104, 120, 64, 96, 60, 100, 96, 60, 124, 70}
)

const (
	colMask = 0
)

// Columns of the cue-group table.
var (
	groupCols = []string{"#", "cue words", "label", "training texts", "filters", "score", "flagged share", "harm",
		"all masked: accuracy", "cue-conflicting: accuracy", "strongest", "strongest masked: accuracy"}
	groupWidths = []float32{36, 220, 104, 100, 60, 64, 96, 64, 150, 170, 70, 180}
)

// groupRows lists the audit's cue groups in their order, every number as
// the audit computed it.
func groupRows(a *auditState) [][]string {
	if a == nil {
		return nil
	}
	var rows [][]string
	for G, cg := range a.A.CueGroups {
		conf := "—"
		if cg.Conflict.Texts > 0 {
			conf = fmt.Sprintf("%.3f → %.3f (%d texts)", cg.Conflict.Accuracy, cg.Conflict.AccuracyMasked, cg.Conflict.Texts)
		}
		rows = append(rows, []string{fmt.Sprint(G + 1), strings.Join(cg.Words, " "), cg.Label,
			fmt.Sprintf("%d (%.0f%%)", cg.TrainTexts, 100*cg.LabelShare), fmt.Sprint(len(cg.Filters)), fmt.Sprintf("%.4f", cg.Score),
			fmt.Sprintf("%.3f", cg.Parts.FlaggedShare), fmt.Sprintf("%+.4f", cg.Parts.Harm),
			fmt.Sprintf("%.4f → %.4f", cg.Ablation.Accuracy, cg.Ablation.AccuracyMasked), conf, fmt.Sprint(len(cg.Mask)),
			fmt.Sprintf("%.4f → %.4f (p %.2g)", cg.MaskAblation.Accuracy, cg.MaskAblation.AccuracyMasked, cg.MaskP)})
	}
	return rows
}

// groupStory describes cue group G (0-based) in a sentence, from the
// audit's numbers.
func groupStory(a *auditState, G int) string {
	cg := &a.A.CueGroups[G]
	s := fmt.Sprintf("Group %d: %s (%d training texts, %.0f%% %s) — %d filters key on it: %s. Masking all of them: held-out accuracy %.4f → %.4f",
		G+1, strings.Join(cg.Words, ", "), cg.TrainTexts, 100*cg.LabelShare, cg.Label, len(cg.Filters), intList(cg.Filters),
		cg.Ablation.Accuracy, cg.Ablation.AccuracyMasked)
	if cg.Conflict.Texts > 0 {
		s += fmt.Sprintf(", and %.3f → %.3f on the %d held-out texts where the cue points away from the gold label", cg.Conflict.Accuracy, cg.Conflict.AccuracyMasked, cg.Conflict.Texts)
	}
	s += fmt.Sprintf(". Its strongest %d (%s): %.4f → %.4f (one-sided exact McNemar p = %.2g).", len(cg.Mask), intList(cg.Mask),
		cg.MaskAblation.Accuracy, cg.MaskAblation.AccuracyMasked, cg.MaskP)
	if len(cg.Shared) > 0 {
		s += " Words that come with it and count as nobody's cue: " + strings.Join(cg.Shared, " ") + "."
	}
	return s
}

func intList(gs []int) string {
	s := make([]string, len(gs))
	for i, g := range gs {
		s[i] = fmt.Sprint(g)
	}
	return strings.Join(s, ", ")
}

// auditView: the ranked suspects with every part of their score, the
// evidence of the selected one, the flagged tokens, and masking with the
// before/after comparison.
func auditView(st *State) fyne.CanvasObject {
	runBtn := widget.NewButton("Run the audit", func() { st.runAudit(nil) })
	runBtn.Importance = widget.HighImportance
	stopBtn := widget.NewButton("Stop", func() { st.cancel(taskAudit) })
	summary := widget.NewLabel("Run the audit to rank the filters that may key on spurious cues (Run › Run the audit).")
	summary.Wrapping = fyne.TextWrapWord
	formula := widget.NewLabelWithStyle("", fyne.TextAlignLeading, fyne.TextStyle{Italic: true})
	formula.Wrapping = fyne.TextWrapWord

	ticked := map[int]bool{}
	tickedList := func() []int {
		var gs []int
		for g, b := range ticked {
			if b {
				gs = append(gs, g)
			}
		}
		sort.Ints(gs)
		return gs
	}

	suspects := newSheet(suspectCols, suspectWidths)
	flagged := newSheet(flaggedCols, flaggedWidths)
	groups := newSheet(groupCols, groupWidths)
	story := widget.NewLabel("Run the audit to see the cue groups: flagged words that travel together and the filters keyed on them.")
	story.Wrapping = fyne.TextWrapWord
	groupNote := widget.NewLabel("Select a group to see what masking its filters changes.")
	groupNote.Wrapping = fyne.TextWrapWord
	selGroup := -1

	// Evidence of the selected suspect.
	title := widget.NewLabelWithStyle("Select a suspect to see its evidence; tap its mask cell to tick it.", fyne.TextAlignLeading, fyne.TextStyle{Bold: true})
	title.Wrapping = fyne.TextWrapWord
	parts := newSheet([]string{"part", "value", "what it is"}, []float32{150, 90, 520})
	cues := newSheet([]string{"cue word", "label", "z", "slot-mass share", "window share"}, []float32{130, 120, 70, 120, 110})
	effects := newSheet([]string{"intervention", "measure", "value"}, []float32{170, 230, 280})
	examples := newSheet([]string{"figure", "split", "#", "gold", "predicted", "after", "value", "note", "text"},
		[]float32{120, 64, 50, 110, 110, 110, 64, 160, 480})
	var exampleList []explain.AuditExample
	examples.onSelect = func(row int) {
		if a := itemGet(st.audit); a != nil && row < len(exampleList) {
			st.explainThis(a.text(exampleList[row]))
		}
	}
	exampleNote := widget.NewLabel("The texts behind each figure; tap one to explain it.")
	exampleNote.Wrapping = fyne.TextWrapWord

	showSuspect := func(s *explain.Suspect) {
		if s == nil {
			title.SetText("Select a suspect to see its evidence; tap its mask cell to tick it.")
			for _, sh := range []*sheet{parts, cues, effects, examples} {
				sh.setRows(nil)
			}
			exampleList = nil
			return
		}
		p := s.Parts
		title.SetText(fmt.Sprintf("Filter %d (width %d) votes for %s; cue words: %s. Score %.4f = %.4f × max(0, %.4f).",
			s.Filter, s.Width, s.Label, cueWords(s), s.Score, p.FlaggedShare, p.Harm))
		parts.setRows(suspectParts(s))
		var crows [][]string
		for _, c := range s.Cues {
			crows = append(crows, []string{c.Token, c.Label, fmt.Sprintf("%.2f", c.Z), fmt.Sprintf("%.3f", c.MassShare), fmt.Sprintf("%.3f", c.WindowShare)})
		}
		cues.setRows(crows)
		effects.setRows(suspectEffects(s))
		exampleList = nil
		var erows [][]string
		add := func(fig string, exs []explain.AuditExample) {
			for _, ex := range exs {
				exampleList = append(exampleList, ex)
				erows = append(erows, []string{fig, ex.Split, fmt.Sprint(ex.Index + 1), ex.Gold, ex.Pred, ex.After,
					fmt.Sprintf("%.3f", ex.Value), ex.Note, oneLine(ex.Snippet)})
			}
		}
		add("cue window", s.Examples.Windows)
		add("conflict, masked", s.Examples.Conflict)
		add("substitution flip", s.Examples.Counterfactual)
		examples.setRows(erows)
		exampleNote.SetText(fmt.Sprintf("%d texts behind the figures: training windows above the threshold holding a cue, "+
			"held-out texts where the cue points away from the gold label and masking changes the prediction, "+
			"and substitutions that flipped it. Tap one to explain it.", len(erows)))
	}

	// Masking: ticking a filter re-evaluates at once.
	compare := newSheet([]string{"measure", "original", "masked", "change"}, []float32{170, 80, 80, 80})
	maskNote := widget.NewLabel("Tick filters (the mask column, or the list of all filters) to mask them; the held-out metrics of the masked model appear here.")
	maskNote.Wrapping = fyne.TextWrapWord
	var mask *maskState
	st.maskShown = func() *maskState { return mask }
	save := widget.NewButton("Save masked model…", func() {
		if mask == nil {
			return
		}
		m := mask.Model
		st.saveDialog("Save masked model", "telltale-masked.tt", func(path string) error { return m.Save(path) })
	})
	save.Disable()

	// showBaseline fills the original column only, before any masking.
	showBaseline := func() {
		ms := itemGet(st.model)
		if ms == nil || ms.Eval == nil {
			compare.setRows(nil)
			return
		}
		rows := compareRows(ms.Eval.Metrics, ms.Eval.Metrics)
		for _, r := range rows {
			r[2], r[3] = "—", "—"
		}
		compare.setRows(rows)
	}
	var suspectRows func()
	var allChecks *widget.List
	remask := func() {
		suspectRows()
		allChecks.Refresh()
		gs := tickedList()
		if len(gs) == 0 {
			mask = nil
			save.Disable()
			showBaseline()
			maskNote.SetText("No filter ticked: the model is as trained.")
			return
		}
		st.applyMask(gs, func(mk *maskState) {
			if fmt.Sprint(mk.Filters) != fmt.Sprint(tickedList()) {
				return // the ticks changed meanwhile; a newer evaluation follows
			}
			mask = mk
			save.Enable()
			compare.setRows(compareRows(itemGet(st.model).Eval.Metrics, mk.Eval.Metrics))
			maskNote.SetText(fmt.Sprintf("Masked filters %v.", mk.Filters))
		})
	}
	st.maskTicks = func(gs []int) {
		clear(ticked)
		for _, g := range gs {
			ticked[g] = true
		}
		remask()
	}
	// tickMore adds filters to the ticked ones and masks them all.
	tickMore := func(gs []int) {
		for _, g := range gs {
			ticked[g] = true
		}
		remask()
	}
	tickStrongest := widget.NewButton("Tick its strongest filters", func() {
		if a := itemGet(st.audit); a != nil && selGroup >= 0 && selGroup < len(a.A.CueGroups) {
			tickMore(a.A.CueGroups[selGroup].Mask)
		}
	})
	tickAll := widget.NewButton("Tick all its filters", func() {
		if a := itemGet(st.audit); a != nil && selGroup >= 0 && selGroup < len(a.A.CueGroups) {
			tickMore(a.A.CueGroups[selGroup].Filters)
		}
	})
	tickPlan := widget.NewButton("Tick the suggested mask", func() {
		if a := itemGet(st.audit); a != nil && a.A.Plan != nil {
			tickMore(a.A.Plan.Filters)
		}
	})
	untick := widget.NewButton("Untick all", func() { st.maskTicks(nil) })
	for _, b := range []*widget.Button{tickStrongest, tickAll, tickPlan} {
		b.Disable()
	}
	showGroup := func(G int) {
		a := itemGet(st.audit)
		if a == nil || G < 0 || G >= len(a.A.CueGroups) {
			selGroup = -1
			groupNote.SetText("Select a group to see what masking its filters changes.")
			tickStrongest.Disable()
			tickAll.Disable()
			return
		}
		selGroup = G
		groupNote.SetText(groupStory(a, G))
		tickStrongest.Enable()
		tickAll.Enable()
	}
	groups.onSelect = showGroup

	suspectRows = func() {
		a := itemGet(st.audit)
		if a == nil {
			suspects.setRows(nil)
			return
		}
		sel := suspects.selected
		rows := make([][]string, len(a.A.Filters))
		for i, s := range a.A.Filters {
			m := "☐"
			if ticked[s.Filter] {
				m = "☑"
			}
			flip := "—"
			if s.Counter != nil {
				flip = fmt.Sprintf("%.3f", s.Counter.FlipRate)
			}
			rows[i] = []string{m, fmt.Sprint(i + 1), fmt.Sprint(s.Filter), s.Label, cueWords(&s), fmt.Sprintf("%.4f", s.Score),
				fmt.Sprintf("%.3f", s.Parts.FlaggedShare), fmt.Sprintf("%+.4f", s.Parts.Push), fmt.Sprintf("%.3f", s.Parts.ConflictShare),
				fmt.Sprintf("%+.4f", s.Parts.ConflictGain), fmt.Sprintf("%+.4f", s.Parts.Harm),
				fmt.Sprintf("%+.4f", s.Ablation.DeltaMacroF1), flip}
		}
		suspects.rows = rows
		suspects.reorder()
		suspects.selected = sel
	}
	suspects.onCell = func(row, col int) {
		a := itemGet(st.audit)
		if a == nil || row >= len(a.A.Filters) {
			return
		}
		if col == colMask {
			g := a.A.Filters[row].Filter
			ticked[g] = !ticked[g]
			remask()
			// A second tap on the same cell must toggle again.
			suspects.table.UnselectAll()
		}
	}
	suspects.onSelect = func(row int) {
		if a := itemGet(st.audit); a != nil && row < len(a.A.Filters) {
			showSuspect(&a.A.Filters[row])
		}
	}

	// Every filter, for masking filters the audit did not list.
	var filterIDs []int
	allChecks = widget.NewList(func() int { return len(filterIDs) },
		func() fyne.CanvasObject { return widget.NewCheck("", nil) },
		func(i widget.ListItemID, o fyne.CanvasObject) {
			c := o.(*widget.Check)
			g := filterIDs[i]
			c.OnChanged = nil
			c.SetChecked(ticked[g])
			label := fmt.Sprintf("filter %d", g)
			if ps := itemGet(st.profiles); ps != nil && g < len(ps.P.Filters) {
				fp := ps.P.Filters[g]
				var top string
				if len(fp.TopNgrams) > 0 {
					top = strings.Join(fp.TopNgrams[0].Tokens, " ")
				}
				label = fmt.Sprintf("filter %d · width %d · %s · %s", g, fp.Width, fp.Label, top)
			}
			if s := itemGet(st.audit).suspectOf(g); s != nil {
				label += fmt.Sprintf(" · suspicion %.4f (%s)", s.Score, cueWords(s))
			}
			c.Text = label
			c.Refresh()
			c.OnChanged = func(b bool) {
				ticked[g] = b
				remask()
			}
		})

	st.model.AddListener(binding.NewDataListener(func() {
		clear(ticked)
		mask = nil
		save.Disable()
		showBaseline()
		filterIDs = nil
		if ms := itemGet(st.model); ms != nil {
			for g := range ms.Model.Config.NumFilters() {
				filterIDs = append(filterIDs, g)
			}
		}
		allChecks.Refresh()
	}))
	st.profiles.AddListener(binding.NewDataListener(allChecks.Refresh))
	st.audit.AddListener(binding.NewDataListener(func() {
		a := itemGet(st.audit)
		showSuspect(nil)
		suspectRows()
		allChecks.Refresh()
		if a == nil {
			summary.SetText("Run the audit to rank the filters that may key on spurious cues (Run › Run the audit).")
			formula.SetText("")
			flagged.setRows(nil)
			groups.setRows(nil)
			story.SetText("Run the audit to see the cue groups: flagged words that travel together and the filters keyed on them.")
			tickPlan.Disable()
			showGroup(-1)
			return
		}
		au := a.A
		groups.setRows(groupRows(a))
		story.SetText(reflow(au.Story()))
		if au.Plan != nil {
			tickPlan.Enable()
		} else {
			tickPlan.Disable()
		}
		if len(au.CueGroups) > 0 {
			groups.selectRow(0)
		} else {
			showGroup(-1)
		}
		summary.SetText(fmt.Sprintf("%d of %d tested tokens flagged on %d training texts (one-sided z above %.2f: family-wise level %g, Bonferroni over %d tokens, %s prior). "+
			"%d filters scored; the top %d listed. Held-out split (%d texts) as trained: accuracy %.4f, macro-F1 %.4f.",
			len(au.Tokens), au.Tested, au.TrainTexts, au.Threshold, au.Alpha, au.Tested, au.PriorKind,
			au.Candidates, len(au.Filters), au.HeldoutTexts, au.Baseline.Accuracy, au.Baseline.MacroF1))
		formula.SetText(au.Formula)
		flagged.setRows(flaggedTokenRows(a))
		if len(au.Filters) > 0 {
			suspects.selectRow(0)
		}
	}))
	refreshButtons := func() {
		if st.running(taskAudit) {
			runBtn.Disable()
			stopBtn.Enable()
		} else {
			runBtn.Enable()
			stopBtn.Disable()
		}
	}
	st.busy.AddListener(binding.NewDataListener(refreshButtons))

	st.auditShown = func() *auditState { return itemGet(st.audit) }
	st.auditSuspects = suspects
	st.maskCompare = compare
	st.exports["Cue audit"] = exporter{
		table: func() *sheet { return suspects },
		data: func() any {
			var out struct {
				Audit    *explain.Audit `json:"audit,omitempty"`
				Masked   []int          `json:"masked,omitempty"`
				Original *cnn.Metrics   `json:"original,omitempty"`
				After    *cnn.Metrics   `json:"after,omitempty"`
			}
			if a := itemGet(st.audit); a != nil {
				out.Audit = a.A
			}
			if mask != nil {
				orig := itemGet(st.model).Eval.Metrics
				out.Masked, out.Original, out.After = mask.Filters, &orig, &mask.Eval.Metrics
			}
			return out
		},
	}

	head := container.NewBorder(nil, nil, nil, container.NewHBox(runBtn, stopBtn), summary)
	partsSplit := container.NewVSplit(parts.table, cues.table)
	partsSplit.Offset = 0.72
	evidence := container.NewAppTabs(
		container.NewTabItem("Score parts", partsSplit),
		container.NewTabItem("Ablation and substitution", effects.table),
		container.NewTabItem("Examples", container.NewBorder(exampleNote, nil, nil, nil, examples.table)),
	)
	maskPane := container.NewBorder(container.NewBorder(nil, nil, nil, save, maskNote), nil, nil, nil, compare.table)
	right := container.NewVSplit(container.NewBorder(title, nil, nil, nil, evidence), maskPane)
	right.Offset = 0.7
	// The group table on top, the selected group's story and the audit's
	// whole story below it, scrolled, so long stories never push the
	// window past the screen.
	storyPane := container.NewVScroll(container.NewVBox(groupNote, widget.NewSeparator(), story))
	groupSplit := container.NewVSplit(groups.table, storyPane)
	groupSplit.Offset = 0.45
	cuesPane := container.NewBorder(
		container.NewGridWithColumns(2, tickStrongest, tickAll, tickPlan, untick), nil, nil, nil, groupSplit)
	lists := container.NewAppTabs(
		container.NewTabItem("Cues", cuesPane),
		container.NewTabItem("Suspects", container.NewBorder(formula, nil, nil, nil, suspects.table)),
		container.NewTabItem("Flagged tokens", flagged.table),
		container.NewTabItem("All filters", allChecks),
	)
	st.auditTab = func(title string) {
		for _, it := range lists.Items {
			if it.Text == title {
				lists.Select(it)
			}
		}
	}
	split := container.NewHSplit(lists, right)
	split.Offset = 0.5
	return container.NewBorder(head, nil, nil, nil, split)
}

// suspectParts lists every part of a suspect's score with its basis.
func suspectParts(s *explain.Suspect) [][]string {
	p := s.Parts
	f := func(v float64) string { return fmt.Sprintf("%.4f", v) }
	return [][]string{
		{"score", f(s.Score), "flagged share × max(0, harm)"},
		{"flagged share", f(p.FlaggedShare), fmt.Sprintf("flagged slot mass %.4f of %.4f, over %d training windows at or above the purity threshold %.4f", p.FlaggedMass, p.Mass, p.AboveWindows, p.Threshold)},
		{"harm", f(p.Harm), "conflict share × conflict gain"},
		{"conflict share", f(p.ConflictShare), fmt.Sprintf("of the %d held-out texts with a cue word, the share whose gold label is not the cue's", p.PushTexts)},
		{"conflict gain", f(p.ConflictGain), "mean rise of p(gold) on those texts when the filter is masked"},
		{"push", f(p.Push), fmt.Sprintf("mean fall of p(cue label) when masked, over the %d held-out texts with a cue word (breaks ties)", p.PushTexts)},
		{"dominant slot", fmt.Sprint(s.Concentration.Slot + 1), fmt.Sprintf("top word %q in %.1f%% of windows; entropy %.3f bits (normalized %.3f)",
			s.Concentration.TopWord, 100*s.Concentration.TopShare, s.Concentration.Entropy, s.Concentration.Normalized)},
	}
}

// suspectEffects lists the ablation, conflict-subset and counterfactual
// results of a suspect, and the categories of its top n-grams.
func suspectEffects(s *explain.Suspect) [][]string {
	ab, cf := s.Ablation, s.Conflict
	f := func(v float64) string { return fmt.Sprintf("%.4f", v) }
	rows := [][]string{
		{"ablation (held-out)", "accuracy", fmt.Sprintf("%.4f → %.4f (%+.4f)", ab.Accuracy, ab.AccuracyMasked, ab.DeltaAccuracy)},
		{"ablation (held-out)", "macro-F1", fmt.Sprintf("%.4f → %.4f (%+.4f)", ab.MacroF1, ab.MacroF1Masked, ab.DeltaMacroF1)},
		{"ablation (held-out)", "predictions changed", fmt.Sprintf("%d (%.2f%%)", ab.Flipped, 100*ab.FlippedShare)},
		{"cue-conflicting texts", "texts (cue points to " + cf.CueLabel + ")", fmt.Sprint(cf.Texts)},
		{"cue-conflicting texts", "accuracy", fmt.Sprintf("%.4f → %.4f masked", cf.Accuracy, cf.AccuracyMasked)},
		{"cue-conflicting texts", "fixed / broken by masking", fmt.Sprintf("%d / %d", cf.Fixed, cf.Broken)},
	}
	if c := s.Counter; c != nil {
		rows = append(rows,
			[]string{"cue substitution", "cue words → alternatives", strings.Join(c.Cues, " ") + " → " + strings.Join(c.Alternatives, " ")},
			[]string{"cue substitution", "texts × draws", fmt.Sprintf("%d × %d", c.Texts, c.Draws)},
			[]string{"cue substitution", "flips (rate)", fmt.Sprintf("%d (%.4f)", c.Flips, c.FlipRate)},
			[]string{"cue substitution", "mean change of p(prediction)", fmt.Sprintf("%+.4f", c.MeanProbChange)},
			[]string{"control: random positions", "flips (rate)", fmt.Sprintf("%d (%.4f)", c.ControlFlips, c.ControlFlipRate)},
			[]string{"control: random positions", "mean change of p(prediction)", fmt.Sprintf("%+.4f", c.ControlChange)},
		)
	} else {
		rows = append(rows, []string{"cue substitution", "not run", "only the top suspects are substituted"})
	}
	for _, c := range s.Categories {
		rows = append(rows, []string{"top n-grams", "category " + c.Category, f(c.Share) + "  " + strings.Join(c.Ngrams, " | ")})
	}
	for _, n := range s.TopNgrams {
		rows = append(rows, []string{"top n-grams", strings.Join(n.Tokens, " "), fmt.Sprintf("activation %.4f, wins in %d texts %s", n.Activation, n.Count, strings.Join(n.Categories, " "))})
	}
	return rows
}

// reflow joins the lines of terminal text that were broken only to fit a
// terminal, so a word-wrapped label can lay them out: a line is joined to
// the one before it unless it is indented or empty, or the one before ends a
// sentence or a lead-in (., :) or is empty.
func reflow(s string) string {
	lines := strings.Split(s, "\n")
	var out []string
	for _, l := range lines {
		if n := len(out); n > 0 && l != "" && !strings.HasPrefix(l, " ") {
			prev := strings.TrimRight(out[n-1], " ")
			if prev != "" && !strings.HasSuffix(prev, ".") && !strings.HasSuffix(prev, ":") {
				out[n-1] = prev + " " + l
				continue
			}
		}
		out = append(out, l)
	}
	return strings.Join(out, "\n")
}

// oneLine folds line breaks for a table cell.
func oneLine(s string) string {
	return strings.Join(strings.Fields(s), " ")
}

// compareRows lays the original and masked metrics side by side.
func compareRows(a, b cnn.Metrics) [][]string {
	row := func(name string, x, y float64) []string {
		return []string{name, fmt.Sprintf("%.4f", x), fmt.Sprintf("%.4f", y), fmt.Sprintf("%+.4f", y-x)}
	}
	rows := [][]string{
		row("accuracy", a.Accuracy, b.Accuracy),
		row("macro-F1", a.MacroF1, b.MacroF1),
		row("weighted F1", a.WeightedF1, b.WeightedF1),
		row("calibration error", a.ECE, b.ECE),
	}
	for i := range a.PerClass {
		if i < len(b.PerClass) {
			rows = append(rows, row("F1 of "+a.PerClass[i].Label, a.PerClass[i].F1, b.PerClass[i].F1))
		}
	}
	return rows
}
