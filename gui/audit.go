package gui

import (
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"

	"telltale/cnn"
	"telltale/explain"
)

// auditState is the result of the cue audit of the open model
// (explain.RunAudit) and the texts its examples point into.
type auditState struct {
	A       *explain.Audit
	suspect map[int]int // filter → index into A.Filters
	// Texts of the two splits the audit read, by index (its examples name
	// a split and an index): the training and the test split.
	Train, Test []string
}

func newAuditState(a *explain.Audit, train, test []string) *auditState {
	as := &auditState{A: a, suspect: map[int]int{}, Train: train, Test: test}
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

// suspicionOf is filter g's suspicion score as shown in lists, "—" without
// an audit or when g is not among the suspects.
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
	src := a.Test
	if ex.Split == "train" {
		src = a.Train
	}
	if ex.Index >= 0 && ex.Index < len(src) {
		return src[ex.Index]
	}
	return ex.Snippet
}

// splitOf names an example's split in the window's words.
func splitOf(ex explain.AuditExample) string {
	if ex.Split == "train" {
		return "training"
	}
	return "test"
}

// inWindowWords rewrites the audit's prose for the window: the audit calls
// the split it was given "held-out"; the window gives it the test split.
func inWindowWords(s string) string {
	return strings.ReplaceAll(s, "held-out", "test")
}

// windowStory is the audit's story for the window: in the window's words,
// with its closing command line (for the terminal) replaced by what to do
// here.
func windowStory(story string) string {
	if i := strings.Index(story, "To try it:"); i >= 0 {
		story = strings.TrimSpace(story[:i]) + "\n\nTo try it here: Tick the suggested mask, or a group's strongest filters, and read the test figures on the right."
	}
	return inWindowWords(reflow(story))
}

// categoryNames are the audit's artifact categories in words.
var categoryNames = map[string]string{
	"number-date":        "number or date",
	"email-url":          "e-mail or web address",
	"placeholder":        "placeholder",
	"punctuation-markup": "punctuation or markup",
	"boilerplate":        "boilerplate line",
}

func categoryName(c string) string {
	if n, ok := categoryNames[c]; ok {
		return n
	}
	return strings.ReplaceAll(c, "-", " ")
}

// auditSeed seeds the audit's substitution draws.
const auditSeed = 1

// auditTop is the number of suspects the window asks for.
const auditTop = 20

// auditNow shows the audit view and runs the cue audit.
func (st *State) auditNow() {
	st.show(titleAudit)
	if !st.isRunning(taskAudit) {
		st.runAudit(nil)
	}
}

// runAudit runs the cue audit of the open model in the background: word
// statistics and filter evidence on the training split, interventions on
// the test split; then runs then, if not nil (also after a failure).
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
	st.setStatus("Running the cue audit…")
	st.start(taskAudit, true, func(ctx context.Context, report reporter) (func(), error) {
		a, err := auditWork(ctx, ms, cs, prof, report)
		if err != nil {
			return then, err
		}
		as := newAuditState(a, cs.Train.Texts(), cs.Test.Texts())
		return func() {
			if itemGet(st.model) == ms {
				st.audit.Set(as)
				st.setStatus(fmt.Sprintf("Cue audit done: %s flagged, %s scored, %s listed.",
					plural(len(a.Tokens), "word", "words"), plural(a.Candidates, "filter", "filters"), plural(len(a.Filters), "suspect", "suspects")))
			}
			if then != nil {
				then()
			}
		}, nil
	})
}

// auditWork runs explain.RunAudit on the training and test splits.
func auditWork(ctx context.Context, ms *modelState, cs *corpusState, prof *explain.Profiles, report reporter) (*explain.Audit, error) {
	maxLen := 0
	if r := ms.Model.Info.Recipe; r != nil {
		maxLen = r.MaxLen
	}
	tr, err := explain.NewAuditData(ms.Model, cs.Train, maxLen, 0)
	if err != nil {
		return nil, fmt.Errorf("the training split does not fit this model: %w", err)
	}
	te, err := explain.NewAuditData(ms.Model, cs.Test, maxLen, 0)
	if err != nil {
		return nil, fmt.Errorf("the test split does not fit this model: %w", err)
	}
	return explain.RunAudit(ctx, ms.Model, tr, te,
		explain.AuditOptions{Profiles: prof, Table: ms.Table, Top: auditTop, Seed: auditSeed},
		func(stage string, done, total int) {
			report(done, total, fmt.Sprintf("Cue audit: %s, %d of %d", auditStages[stage], done, total))
		})
}

// auditStages names RunAudit's stages for the status bar.
var auditStages = map[string]string{
	"profile":        "profiling the filters",
	"evidence":       "weighing each filter's evidence",
	"heldout":        "masking each filter on the test split",
	"counterfactual": "substituting cue words",
}

// maskState is a masked copy of the open model and its test result.
type maskState struct {
	Filters []int // masked filters, ascending
	Model   *cnn.Model
	Eval    *evaluation
}

// applyMask evaluates a copy of the open model with filters masked
// (explain.MaskFilters) in the background, one evaluation at a time, and
// hands the before/after result to done.
func (st *State) applyMask(filters []int, done func(*maskState)) {
	ms, cs := itemGet(st.model), itemGet(st.data)
	if ms == nil || cs == nil {
		st.showError(errors.New("masking needs a model and its data: train or open a model first"))
		return
	}
	filters = slices.Sorted(slices.Values(filters))
	st.setStatus(fmt.Sprintf("Evaluating the model with %s masked…", plural(len(filters), "filter", "filters")))
	st.start(taskMask, true, func(ctx context.Context, report reporter) (func(), error) {
		if ctx.Err() != nil {
			return nil, ctx.Err()
		}
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
			st.setStatus(fmt.Sprintf("With %s masked: test accuracy %.3f (was %.3f), macro-F1 %.3f (was %.3f).",
				plural(len(filters), "filter", "filters"), ev.Metrics.Accuracy, ms.Eval.Metrics.Accuracy, ev.Metrics.MacroF1, ms.Eval.Metrics.MacroF1))
			done(mk)
		}, nil
	})
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
