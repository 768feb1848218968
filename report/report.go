package report

import (
	"errors"
	"fmt"
	"io"
	"time"

	"telltale/audit"
	"telltale/cnn"
	"telltale/corpus"
	"telltale/explain"
	"telltale/internal/atomicfile"
)

const defaultBins = cnn.DefaultBins

// ExampleKind says why an example was chosen for the report.
type ExampleKind string

const (
	// KindCorrect: the model's label equals the gold label.
	KindCorrect ExampleKind = "correct"
	// KindWrong: the model's label differs from the gold label.
	KindWrong ExampleKind = "wrong"
	// KindCueConflict: the text holds a cue the audit acted on that points
	// to a label other than the gold one, and replacing the cue changed the
	// model's label.
	KindCueConflict ExampleKind = "cue-conflicting"
)

// Example is one explained text of the held-out split.
type Example struct {
	Kind        ExampleKind
	Text        string // the original text; token offsets refer to it
	Gold        string // gold label
	Note        string // optional: why it was chosen (e.g. which cue it holds)
	Explanation *explain.Explanation
}

// Input holds the already-computed pieces the report lays out. Only Model is
// required; every other piece that is nil or empty gets a section that says
// it was not computed.
type Input struct {
	Title     string    // default "telltale report"
	Generated time.Time // shown in the header; zero hides it
	ModelPath string    // shown in the header; may be empty

	Model   *cnn.Model
	Summary *corpus.Summary

	// Metrics describes the model on the held-out split named HeldOut
	// (e.g. "test"); Reliability holds its reliability-diagram bins (see
	// Reliability), computed from the same predictions.
	HeldOut     string
	HeldOutNote string // where the held-out texts come from, e.g. "none of them used for training"
	// Warnings say why the figures may not be held-out figures (Options.Warnings);
	// the Evaluation section shows them above the figures.
	Warnings    []string
	Metrics     *cnn.Metrics
	Reliability []cnn.ReliabilityBin
	// Baseline is the CNN beside the linear baseline its file carries, on
	// the same held-out texts as Metrics (cnn.CompareBaseline); nil when
	// the model carries none.
	Baseline *cnn.Comparison

	// Profiles describes the filters over the corpus named ProfiledOn
	// (usually "train").
	Profiles   *explain.Profiles
	ProfiledOn string
	// FiltersPerClass is how many filters of each class the catalogue shows
	// (0 means 3).
	FiltersPerClass int

	// Audit is the cue audit of the model (association on the training
	// split, reliance on the test split); nil says it was not run, and
	// AuditNote, when set, says why and what to do.
	Audit     *audit.Result
	AuditNote string

	Examples []Example
	// ExamplesNote is shown below the examples (for example, why a kind
	// of example is missing).
	ExamplesNote string

	// Notes are extra lines for the reader (for example, which parts were
	// left out and why).
	Notes []string
}

// Report is a laid-out report, ready to be written as one self-contained
// HTML file.
type Report struct {
	page *page
}

// ErrNoModel is returned by New when Input.Model is nil.
var ErrNoModel = errors.New("report: no model")

// New lays out in. It validates the pieces against the model (label counts,
// metric shapes, token and attribution lengths) and renders the plots; it
// computes nothing about the model itself.
func New(in Input) (*Report, error) {
	if in.Model == nil {
		return nil, ErrNoModel
	}
	p, err := layout(in)
	if err != nil {
		return nil, err
	}
	return &Report{page: p}, nil
}

// WriteHTML writes the report as one HTML document with its styles and
// images inline; it makes no external reference.
func (r *Report) WriteHTML(w io.Writer) error {
	return pageTemplate.Execute(w, r.page)
}

// WriteFile writes the report to path atomically: a temporary file in the
// same directory is written, synced and renamed over path, so a failure
// never leaves a partial report behind.
func WriteFile(path string, r *Report) error {
	if err := atomicfile.Write(path, r.WriteHTML); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	return nil
}
