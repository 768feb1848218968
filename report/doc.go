// Package report lays out what the other packages found about a trained
// model as one self-contained HTML file, for colleagues who will not
// install the desktop tool.
//
// # What the page holds
//
// In order: the dataset summary (corpus.Summary: sizes, class balance,
// token lengths of the training, dev (when Options.Dev gives it) and test
// splits, duplicates and leaks); the architecture and training
// record of the model (cnn.Config, cnn.Info); its evaluation on a held-out
// split (cnn.Metrics: per-class table, accuracy and macro-F1 with their 95%
// intervals, ECE) beside the linear baseline the model file carries
// (cnn.CompareBaseline: the baseline's accuracy and macro-F1 with theirs and
// the exact McNemar test between the two) with a confusion-matrix heat map
// and a reliability diagram; a catalogue of
// filters by the class they vote for (explain.Profiles: top n-grams with
// per-slot heat, families, trigger and suppressor words); the cue audit
// (audit.Result: the story in plain words first, what to do, then the cues
// that look like how the data was collected and, apart, those the model
// relies on that read like the task, each with its association, reliance
// and artifact-likeness evidence and their intervals); explained examples
// (correct, wrong and cue-conflicting) painted by exact attribution; and a
// caution section.
// A piece that was not computed gets a section saying so, never a filler.
//
// # Safety and self-containment
//
// The page is built with html/template, so every text from the data
// (labels, words, file names, example texts) is escaped in its context.
// The page has no script; styles are inline; plots are drawn with
// gonum.org/v1/plot, rendered to SVG and inlined as data: URLs; a
// Content-Security-Policy allows nothing else. A @media print style sheet
// keeps cards and tables whole on paper.
//
// Attribution colours follow ColorBrewer's diverging PuOr scheme (see
// colour.go for the source), marked there as safe for colour-blind readers;
// every coloured token carries its signed value in a title attribute and
// the largest ones are listed in a table.
//
// # Use
//
// Callers that already hold the pieces fill an Input and call New; Build
// computes them with cnn, corpus, explain and audit first:
//
//	r, err := report.Build(ctx, model, train, heldout, report.Options{ModelPath: path}, progress)
//	if err != nil { … }
//	err = report.WriteFile("report.html", r) // atomic: temp file + rename
//
// The package computes nothing about the model itself: every number comes
// from corpus, cnn, explain and audit (the reliability bins from
// cnn.Reliability). The cue audit's words (DescribeCue, AuditMethod) and
// tables (CueTable, StabilityTable) are exported, so that the command line
// says and exports what the report shows.
package report
