package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"slices"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/atomicfile"
	"telltale/internal/heldout"
	"telltale/internal/inputfile"
	"telltale/internal/wording"
)

// The three splits, one word each everywhere: training, dev (early
// stopping) and test (the final evaluation, never used for a choice).
// train and data make them from --data, a file or a share of --data each;
// the model file records how (cnn.SplitRecord), and the commands that
// evaluate a saved model find the same test split again from it.

// splitOptions are the dev and test options of train and data.
type splitOptions struct {
	Dev, Test         string
	DevFrac, TestFrac float64
	Seed              uint64
}

func (s *splitOptions) register(fs *flag.FlagSet, seedUsage string) {
	fs.StringVar(&s.Dev, "dev", "", "labeled dev file, for early stopping (default: --dev-frac of --data)")
	floatVar(fs, &s.DevFrac, "dev-frac", cnn.DefaultDevFrac, "without --dev: share of --data held out as the dev split, stratified by label")
	fs.StringVar(&s.Test, "test", "", "labeled test file, for the final evaluation (default: --test-frac of --data)")
	floatVar(fs, &s.TestFrac, "test-frac", cnn.DefaultTestFrac, "without --test: share of --data held out as the test split, stratified by label")
	seedVar(fs, &s.Seed, "seed", cnn.DefaultRecipe().Train.Seed, seedUsage)
}

// check refuses a file and a share for one split, shares outside (0, 1),
// and shares that leave nothing to train on.
func (s *splitOptions) check(fs *flag.FlagSet) error {
	for _, p := range []struct{ file, frac, given string }{{"dev", "dev-frac", s.Dev}, {"test", "test-frac", s.Test}} {
		if p.given != "" && isSet(fs, p.frac) {
			return usagef("give --%s FILE or --%s, not both", p.file, p.frac)
		}
	}
	if s.Dev == "" {
		if err := checkShare("dev-frac", s.DevFrac, "of --data to hold out for early stopping"); err != nil {
			return err
		}
	}
	if s.Test == "" {
		if err := checkShare("test-frac", s.TestFrac, "of --data to hold out for the final evaluation"); err != nil {
			return err
		}
	}
	if s.Dev == "" && s.Test == "" && s.DevFrac+s.TestFrac >= 1 {
		return usagef("--dev-frac %g and --test-frac %g hold out %.0f%% of --data: together they must stay below 1, leaving texts to train on",
			s.DevFrac, s.TestFrac, 100*(s.DevFrac+s.TestFrac))
	}
	return nil
}

// splits are the three splits of a run and the record of how they were
// made.
type splits struct {
	all              *corpus.Dataset // all of --data
	train, dev, test *corpus.Dataset
	record           cnn.SplitRecord
}

// load reads data (and the dev and test files) and makes the three splits.
func (s *splitOptions) load(data string, r *readOptions, warn io.Writer, quiet bool) (*splits, error) {
	all, err := r.read(data, true, warn, quiet)
	if err != nil {
		return nil, err
	}
	devFrac, testFrac := s.DevFrac, s.TestFrac
	if s.Dev != "" {
		devFrac = 0
	}
	if s.Test != "" {
		testFrac = 0
	}
	sp := &splits{all: all}
	devPipe, testPipe := s.Dev != "" && inputfile.ReadOnce(s.Dev), s.Test != "" && inputfile.ReadOnce(s.Test)
	sp.train, sp.dev, sp.test = all.SplitThree(devFrac, testFrac, s.Seed)
	if s.Dev != "" {
		if sp.dev, err = r.readHeldOut(s.Dev, false, warn, quiet); err != nil {
			return nil, err
		}
	}
	if s.Test != "" {
		if sp.test, err = r.readHeldOut(s.Test, false, warn, quiet); err != nil {
			return nil, err
		}
	}
	sp.record = cnn.SplitRecord{Data: data, DataAbs: absPath(data), DevFile: absPath(s.Dev), TestFile: absPath(s.Test),
		DevFrac: devFrac, TestFrac: testFrac, Seed: s.Seed, Examples: len(all.Examples), Fingerprint: all.Fingerprint(),
		Train: len(sp.train.Examples), Dev: len(sp.dev.Examples), Test: len(sp.test.Examples),
		DevPipe: devPipe, TestPipe: testPipe}
	if s.Dev != "" {
		sp.record.DevFingerprint = sp.dev.Fingerprint()
	}
	if s.Test != "" {
		sp.record.TestFingerprint = sp.test.Fingerprint()
	}
	return sp, nil
}

// absPath is path made absolute ("" stays "").
func absPath(path string) string {
	if path == "" {
		return ""
	}
	if abs, err := filepath.Abs(path); err == nil {
		return abs
	}
	return path
}

// evalSet is what a command that evaluates a saved model works on.
type evalSet struct {
	all   *corpus.Dataset // all of --data; nil without --data
	train *corpus.Dataset // the training split of --data (all of it when the model's split is not found); nil without --data
	test  *corpus.Dataset // the texts to evaluate on
	dev   *corpus.Dataset // the model's dev split (its share of --data, or its dev file) when --data is the model's data; else nil
	name  string          // "test", or "all" when that is all of --data
	note  string          // where the texts come from, for the user
	// file is the file the texts were read from when they are a file's:
	// --test, or the test file the model recorded; "" for a split drawn
	// out of --data, or all of it.
	file string
	// warnings say why the figures may not be held-out figures, or not the
	// ones train reported (findTestSplit has printed them).
	warnings []string
	// cueWarnings is the number of warnings, last in warnings, about texts
	// that chose the cues the model was retrained without (warnCuesChosen).
	cueWarnings int
}

// mayHoldTraining is the phrase every command uses for texts that may
// include the model's training texts.
const mayHoldTraining = "may include texts the model was trained on"

// findTestSplit finds the texts to evaluate model m on. With test (a file),
// those. Else, when data is the data the model was trained on (the same
// examples: cnn.SplitRecord.Fingerprint), the test split train held out of
// it or the test file train was given; with other data, or a model that
// does not record its splits, all of data, with a note that it may include
// texts the model was trained on. It prints the note that says which texts
// those are (on warn unless quiet), then warns (the same; always in the
// evalSet's warnings) when the texts are the model's training data or
// hold texts of its training split (found in data, or without it in the
// data file the model records: checkTraining; in the test split held out
// of data, copies of them: checkShared), and when the recorded test
// file changed since training; it refuses (a usage error) an empty set of
// texts, and a --relabel label that the one file it is applied to lacks
// (data, or test when data is "").
func findTestSplit(m *cnn.Model, data, test string, r *readOptions, warn io.Writer, quiet bool) (*evalSet, error) {
	return findTestSplitOf(m, "", data, test, r, warn, quiet)
}

// findTestSplitOf is findTestSplit for the model at path (printed before
// each of its warnings; "" for none), for a command of several models.
func findTestSplitOf(m *cnn.Model, path, data, test string, r *readOptions, warn io.Writer, quiet bool) (*evalSet, error) {
	if data == "" && test == "" {
		return nil, usagef("--data or --test is required: labeled texts to evaluate the model on")
	}
	es := &evalSet{name: "test"}
	var err error
	if data != "" {
		if es.all, err = r.read(data, true, warn, quiet); err != nil {
			return nil, err
		}
	}
	rec := m.Info.Splits
	same := es.all != nil && isModelData(rec, es.all)
	if same {
		es.train, es.dev, es.test = es.all.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
		es.readDevFile(rec, r)
	}
	if err := es.findTexts(rec, data, test, same, r, warn, quiet); err != nil {
		return nil, err
	}
	if err := es.checkNotEmpty(rec, data, test, same); err != nil {
		return nil, err
	}
	if es.train == nil {
		es.train = es.all
	}
	// Any texts but the test split train drew out of --data are checked
	// against the training split; that split, for copies of its texts.
	switch {
	case test != "":
		es.checkTraining(rec, test, same, r)
	case same && rec.TestFile != "":
		es.checkTraining(rec, rec.TestFile, same, r)
	case !same:
		es.checkTraining(rec, data, same, r)
	default:
		es.checkShared(rec, data, r)
	}
	es.warnCuesChosen(&m.Info) // last: compare gives the other models their own (cueWarnings)
	// The note first: the warnings are about the texts it names.
	say(warn, quiet, "%s", es.note)
	printHeldOut(warn, quiet, path, es.warnings)
	return es, nil
}

// printHeldOut prints warnings on w unless quiet, each after the model
// path it is of ("" when there is one model).
func printHeldOut(w io.Writer, quiet bool, path string, warnings []string) {
	if quiet {
		return
	}
	for _, msg := range warnings {
		if path != "" {
			msg = path + ": " + msg
		}
		fmt.Fprintf(w, "warning: %s\n", msg)
	}
}

// findTexts sets the texts to evaluate on and the note that says where
// they come from (findTestSplit), warning of a recorded test file that
// changed since training.
func (es *evalSet) findTexts(rec *cnn.SplitRecord, data, test string, same bool, r *readOptions, warn io.Writer, quiet bool) error {
	var err error
	switch {
	case test != "":
		// Without --data the test file is the one file --relabel applies
		// to: every label it maps must occur there, as in --data for train.
		if es.test, err = r.readHeldOut(test, data == "", warn, quiet); err != nil {
			return err
		}
		es.note, es.file = fmt.Sprintf("evaluating on the test file %s (%s)", test, wording.Texts(len(es.test.Examples))), test
		if rec != nil && absPath(test) == rec.TestFile {
			es.warnChanged(rec, test)
		}
	case same && readOnce(rec.TestFile, rec.TestPipe):
		return usagef("the model's test split was read once at training (--test %s, a pipe or a per-process file), and cannot be read again: give the test file with --test", rec.TestFile)
	case same && rec.TestFile != "":
		if es.test, err = r.readHeldOut(rec.TestFile, false, warn, quiet); err != nil {
			return fmt.Errorf("the model's test split is the file it was trained with (--test %s), which cannot be read: %w; give the test file with --test", rec.TestFile, err)
		}
		es.note = fmt.Sprintf("evaluating on %s, the test file the model was trained with (%s)", rec.TestFile, wording.Texts(len(es.test.Examples)))
		es.file = rec.TestFile
		es.warnChanged(rec, rec.TestFile)
	case same:
		es.note = fmt.Sprintf("evaluating on the test split that train held out of %s: %.0f%% of its texts, seed %d (%s), never used for training or to choose the epoch",
			data, 100*rec.TestFrac, rec.Seed, wording.Texts(len(es.test.Examples)))
	case rec != nil && rec.TestFile != "" && absPath(data) == rec.TestFile:
		// --data names the model's own test file: its texts are the test
		// split, none of them trained on (checkTraining still looks for
		// copies of training texts there).
		es.test, es.file = es.all, data
		es.note = fmt.Sprintf("%s is the test file the model was trained with: evaluating on its %s", data, wording.Texts(len(es.all.Examples)))
		es.warnChanged(rec, data)
	case rec == nil:
		es.test, es.name = es.all, "all"
		es.note = fmt.Sprintf("the model file does not record how its splits were made: evaluating on all %s of %s, which %s",
			wording.Texts(len(es.all.Examples)), data, mayHoldTraining)
	default:
		es.test, es.name = es.all, "all"
		es.note = fmt.Sprintf("%s is not the data the model was trained on (%s): evaluating on all %d of its texts, which %s",
			data, rec.Data, len(es.all.Examples), mayHoldTraining)
	}
	return nil
}

// warnChanged warns when the test texts, read from the test file the model
// recorded (at path), changed since training.
func (es *evalSet) warnChanged(rec *cnn.SplitRecord, path string) {
	if w := changedSince("test", path, rec.TestFingerprint, es.test); w != "" {
		es.warnings = append(es.warnings, w)
	}
}

// isModelData reports whether ds holds the examples the model whose split
// record is rec was trained on (all of its --data: rec.Fingerprint).
func isModelData(rec *cnn.SplitRecord, ds *corpus.Dataset) bool {
	return rec != nil && ds != nil && rec.Examples == len(ds.Examples) && rec.Fingerprint == ds.Fingerprint()
}

// warnCuesChosen adds cuesChosen's warnings, after all others, and counts
// them (cueWarnings).
func (es *evalSet) warnCuesChosen(info *cnn.Info) {
	ws := cuesChosen(info, es.test)
	es.warnings, es.cueWarnings = append(es.warnings, ws...), len(ws)
}

// splitWarnings are es's warnings about the texts and the model's splits,
// without those of the cues the model itself was retrained without
// (warnCuesChosen), for another model trained with the same splits.
func (es *evalSet) splitWarnings() []string {
	return slices.Clip(es.warnings[:len(es.warnings)-es.cueWarnings])
}

// cuesChosen are the warnings that the texts of test hold the half of
// held-out texts that chose the cues the model of info was retrained
// without, or its mask (cnn.Info.CuesChosenOn), known by their
// fingerprint under any name: the recorded test split, its file, or
// --test; none when they do not.
func cuesChosen(info *cnn.Info, test *corpus.Dataset) []string {
	var out []string
	choices := info.CuesChosenIn(len(test.Examples), test.Fingerprint())
	seed, seeds, clean := cnn.ConfirmingSeed(choices)
	fix := fmt.Sprintf("for figures on texts that took no part, give the other half, the confirming half, with --test "+
		"(telltale audit of the model it was made from, with --seed %d and --confirming-out FILE, writes it)", seed)
	if !clean {
		fix = heldout.SeedsJoined(seeds, "for held-out figures, give a test file no audit chose on with --test")
	}
	for _, c := range choices {
		out = append(out, heldout.CuesChosen(len(c.Texts), len(test.Examples), c.For == cnn.ChoseMask, fix))
	}
	return out
}

// readOnce reports whether a split file a model recorded (path, "" for
// none) cannot be read again: recorded as read once (pipe, from
// cnn.SplitRecord's DevPipe or TestPipe), or such a path now, for a model
// written before those were recorded (inputfile.ReadOnce).
func readOnce(path string, pipe bool) bool {
	return path != "" && (pipe || inputfile.ReadOnce(path))
}

// readDevFile makes the dev file the model was trained with (rec.DevFile)
// the dev split, warning when it changed since training; when it cannot be
// read, the dev split stays empty, with a warning (no evaluation needs it).
func (es *evalSet) readDevFile(rec *cnn.SplitRecord, r *readOptions) {
	if rec.DevFile == "" {
		return
	}
	if readOnce(rec.DevFile, rec.DevPipe) {
		return // no evaluation needs it; audit --seeds and --retrain say so (trainingRecipe)
	}
	dev, err := r.readHeldOut(rec.DevFile, false, io.Discard, true)
	if err != nil {
		es.warnings = append(es.warnings, fmt.Sprintf("the dev file the model was trained with cannot be read (%v): its dev split is left out", err))
		return
	}
	es.dev = dev
	if w := changedSince("dev", rec.DevFile, rec.DevFingerprint, dev); w != "" {
		es.warnings = append(es.warnings, w)
	}
}

// checkTraining warns when the texts to evaluate on (named name: their
// file, or --data) are the model's training data, or hold texts of its
// training split: the split of --data when that is the model's data
// (same), else the one found in the data file the model records
// (recordedTraining). When the split cannot be found, the note says that
// this could not be checked, and why.
func (es *evalSet) checkTraining(rec *cnn.SplitRecord, name string, same bool, r *readOptions) {
	if rec == nil {
		if es.file != "" { // other texts' notes say they may include training texts
			es.note += "; the model file does not record how its splits were made, so whether they hold texts it was trained on cannot be checked"
		}
		return
	}
	train, why := es.train, ""
	if !same {
		train, why = recordedTraining(rec, es.all, r)
	}
	if w := trainingWarning(rec, es.test, name, train); w != "" {
		es.warnings = append(es.warnings, w)
	} else if train == nil {
		es.note += "; whether they hold texts of the model's training split cannot be checked: " + why
	}
}

// checkShared warns when the test split train held out of data (the
// model's data, rec its splits) holds texts of the training split as
// well, copies in data (heldout.Copies: exact, or but for case and
// punctuation), and says so in the note, which calls the split
// unused for training.
func (es *evalSet) checkShared(rec *cnn.SplitRecord, data string, r *readOptions) {
	n := heldout.Copies(es.test, es.train)
	if n == 0 {
		return
	}
	es.warnings = append(es.warnings, sharedWarning("test", data, rec, r, n, len(es.test.Examples), "its figures are not all held-out figures"))
	es.note += fmt.Sprintf("; but %d of them are texts of the training split as well (or copies but for case and punctuation)", n)
}

// recordedTraining is the training split of the model whose split record
// is rec: made from all (the texts of --data; nil without it) when they are
// the model's data, else from the data file the model records
// (rec.DataAbs) when it can be read again and still holds what train read
// there. Else it is nil, and why says why, for the user.
func recordedTraining(rec *cnn.SplitRecord, all *corpus.Dataset, r *readOptions) (train *corpus.Dataset, why string) {
	if rec == nil {
		return nil, "the model file does not record how its splits were made"
	}
	data := all
	if !isModelData(rec, all) {
		if rec.DataAbs == "" || readOnce(rec.DataAbs, false) {
			return nil, fmt.Sprintf("the data the model was trained on (%s) cannot be read again", rec.Data)
		}
		if _, err := os.Stat(rec.DataAbs); errors.Is(err, fs.ErrNotExist) {
			return nil, fmt.Sprintf("%s, the data the model was trained on, is not there any more", rec.DataAbs)
		}
		ds, err := r.read(rec.DataAbs, false, io.Discard, true)
		if err != nil {
			return nil, fmt.Sprintf("%s, the data the model was trained on, cannot be read (%v)", rec.DataAbs, err)
		}
		if !isModelData(rec, ds) {
			return nil, fmt.Sprintf("%s, the data the model was trained on, no longer holds what train read there "+
				"(it changed since training, or is read here with other options than train's: --text-col, --label-col, --mail, --relabel)", rec.DataAbs)
		}
		data = ds
	}
	train, _, _ = data.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
	return train, ""
}

// trainingWarning is the warning ("" for none) that texts (named name: a
// file, or --data) evaluated by the model whose split record is rec are the
// data it was trained on (the same examples), or hold some of the texts of
// its training split train (nil when it is not known).
func trainingWarning(rec *cnn.SplitRecord, texts *corpus.Dataset, name string, train *corpus.Dataset) string {
	if isModelData(rec, texts) {
		as := ""
		if absPath(name) != rec.DataAbs {
			as = fmt.Sprintf(" (as %s)", rec.Data)
		}
		return fmt.Sprintf("%s is the data the model was trained on%s: it %s, so its figures are not held-out figures", name, as, mayHoldTraining)
	}
	if train == nil {
		return ""
	}
	if n := heldout.Copies(texts, train); n > 0 {
		return fmt.Sprintf("%s %s: %d of its %s are texts of the model's training split (or copies but for case and punctuation), so its figures are not all held-out figures",
			name, mayHoldTraining, n, wording.Texts(len(texts.Examples)))
	}
	return ""
}

// changedSince is a warning when ds, read from the model's recorded dev or
// test file at path (which says which), is not what train read there (its
// fingerprint is not want); "" when it is, or when the model file records
// no fingerprint (written before they were recorded). The window gives the
// same warning (heldout.Changed) with its own fix.
func changedSince(which, path, want string, ds *corpus.Dataset) string {
	fix := "its figures are not the ones train reported; give the original file with --test, or retrain"
	if which == "dev" {
		fix = "it is not the dev split train chose the epoch on; put the original file back, or retrain"
	}
	return heldout.Changed(which, path, want, ds.Fingerprint(), fix)
}

// checkNotEmpty refuses an evaluation on no texts, saying where they were
// to come from and the fix.
func (es *evalSet) checkNotEmpty(rec *cnn.SplitRecord, data, test string, same bool) error {
	if len(es.test.Examples) > 0 {
		return nil
	}
	switch {
	case test != "":
		return usagef("--test %s holds no texts to evaluate on: give a labeled test file", test)
	case same && rec.TestFile == "":
		return usagef("the test split train held out of %s is empty (--test-frac %g of its %s held out none): "+
			"give a labeled test file with --test, or retrain with a larger --test-frac", data, rec.TestFrac, wording.Texts(rec.Examples))
	case same:
		return usagef("%s, the test file the model was trained with, holds no texts: give a labeled test file with --test", rec.TestFile)
	default:
		return usagef("--data %s holds no texts to evaluate on: give labeled texts with --data or --test", data)
	}
}

// trainingSplit is the split model m was trained on out of all (the
// labeled data at path), when all is the data it was trained on (the same
// examples: cnn.SplitRecord.Fingerprint); else all of it. The note says
// which, for the user; isTraining says whether the split is the training
// split.
func trainingSplit(m *cnn.Model, all *corpus.Dataset, path string) (split *corpus.Dataset, note string, isTraining bool) {
	rec := m.Info.Splits
	switch {
	case rec == nil:
		return all, fmt.Sprintf("the model file does not record how its splits were made: profiling all %s of %s", wording.Texts(len(all.Examples)), path), false
	case rec.Examples != len(all.Examples) || rec.Fingerprint != all.Fingerprint():
		return all, fmt.Sprintf("%s is not the data the model was trained on (%s): profiling all %s of it", path, rec.Data, wording.Texts(len(all.Examples))), false
	}
	train, _, _ := all.SplitThree(rec.DevFrac, rec.TestFrac, rec.Seed)
	return train, fmt.Sprintf("profiling the training split of %s, as the report does: %d of its %s, the dev and test splits left out",
		path, len(train.Examples), wording.Texts(len(all.Examples))), true
}

// say prints a note on w unless quiet.
func say(w io.Writer, quiet bool, format string, args ...any) {
	if !quiet {
		fmt.Fprintf(w, "note: "+format+"\n", args...)
	}
}

// writeConfirming writes the test texts of es at idx (indexes into
// es.test.Examples: the audit's confirming half, audit.Result.Confirmation),
// in the file's order, to path in the format its name gives (corpus.FormatOf,
// checked before the audit ran), through a temporary file renamed over
// path, so no half-written file is left.
func writeConfirming(path string, es *evalSet, idx []int) error {
	exs := make([]corpus.Example, len(idx))
	for k, i := range slices.Sorted(slices.Values(idx)) {
		exs[k] = es.test.Examples[i]
	}
	return atomicfile.Write(path, func(w io.Writer) error { return corpus.Write(w, corpus.FormatOf(path), exs) })
}
