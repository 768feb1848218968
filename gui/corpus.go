package gui

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/inputfile"
)

// corpusState is an opened corpus: the labeled data as read, and the
// training, dev and test splits made from it with their summary.
type corpusState struct {
	Source   string // what was opened, for people
	Path     string // the data file, "" for the demo corpus
	TestPath string // the test file, "" when the test split is a share of the data
	Opts     corpus.Options
	Columns  []string // columns or keys of the file, when it has any
	// pipeData and pipeTest are the content of Path and TestPath when
	// they are named pipes (see dataSource), nil for other files.
	pipeData, pipeTest []byte
	// demoAbs and demoTestAbs are, for the demo corpus, the absolute paths
	// of the repository's files it was built from, when the current
	// folder is the repository's and they hold the same bytes ("" else).
	demoAbs, demoTestAbs string
	// All is the labeled data; TestFile the test file (nil without one).
	All, TestFile *corpus.Dataset
	Plan          splitPlan
	// Record is how the splits were made, as a model trained on them
	// records it (cnn.Model.Info.Splits), the same record telltale train
	// writes for the same data, shares and seed.
	Record cnn.SplitRecord
	// Train, Dev and Test are the splits: training (what the model learns
	// from), dev (early stopping) and test (the final evaluation).
	Train, Dev, Test *corpus.Dataset
	Warnings         []corpus.Warning
	// Summary covers the training, dev and test splits (duplicates, leaks).
	Summary corpus.Summary
	Tok     *corpus.Tokenizer // the tokenizer the summary used
	// Lengths is the histogram of the training texts' token counts, by
	// the same tokenizer, for the length plot.
	Lengths []corpus.LengthBin
}

// splitPlan says how the dev and test splits are made from the data: each
// a share of all of it, stratified by label and seeded
// (corpus.Dataset.SplitThree, as telltale train makes them).
type splitPlan struct {
	DevFrac, TestFrac float64
	Seed              uint64
}

// check reports a plan that cannot be made, in the words of the recipe form.
func (p splitPlan) check(withTestFile bool) error {
	switch {
	case p.DevFrac <= 0 || p.DevFrac > 0.5:
		return fmt.Errorf("dev share %g: use a fraction in (0, 0.5], e.g. %g", p.DevFrac, cnn.DefaultDevFrac)
	case withTestFile:
		return nil
	case p.TestFrac <= 0 || p.TestFrac > 0.5:
		return fmt.Errorf("test share %g: use a fraction in (0, 0.5], e.g. %g", p.TestFrac, cnn.DefaultTestFrac)
	case p.DevFrac+p.TestFrac > 0.8:
		return fmt.Errorf("dev share %g and test share %g leave less than a fifth of the data for training: make them smaller", p.DevFrac, p.TestFrac)
	}
	return nil
}

// dataSource says what to open.
type dataSource struct {
	path, testPath      string
	demoTrain, demoTest []byte
	// pipeData and pipeTest are what was read before from path and
	// testPath when they are named pipes, which can be read only once, so
	// that the data can be read again with other columns.
	pipeData, pipeTest []byte
	opts               corpus.Options
}

// openData loads src in the background and makes it the open corpus, split
// by the recipe's plan.
func (st *State) openData(src dataSource, then func()) {
	plan, err := st.recipe.plan()
	if err != nil {
		st.showError(fmt.Errorf("the training recipe's splits need fixing (Training view): %w", err))
		if then != nil {
			then()
		}
		return
	}
	st.setStatus("Opening data…")
	st.start(taskLoad, true, func(ctx context.Context, report reporter) (func(), error) {
		cs, err := loadCorpus(ctx, src, plan)
		if err != nil {
			return then, err
		}
		return func() {
			st.data.Set(cs)
			st.setStatus(fmt.Sprintf("Opened %s: %d training, %d dev and %d test texts, %d labels.",
				cs.Source, len(cs.Train.Examples), len(cs.Dev.Examples), len(cs.Test.Examples), len(cs.Train.Labels)))
			if then != nil {
				then()
			}
		}, nil
	})
}

// loadCorpus reads src and splits it by plan.
func loadCorpus(ctx context.Context, src dataSource, plan splitPlan) (*corpusState, error) {
	cs := &corpusState{Path: src.path, TestPath: src.testPath, Opts: src.opts}
	var err error
	if src.path == "" {
		err = cs.readDemo(src)
	} else {
		err = cs.readFiles(ctx, src)
	}
	if err != nil {
		return nil, err
	}
	if ctx.Err() != nil {
		return nil, ctx.Err()
	}
	if err := plan.check(cs.TestFile != nil); err != nil {
		return nil, fmt.Errorf("the training recipe's splits need fixing (Training view): %w", err)
	}
	return cs.resplit(ctx, plan)
}

// readDemo reads the built-in demo corpus: its training file is the data,
// its test file the test split.
func (cs *corpusState) readDemo(src dataSource) error {
	if len(src.demoTrain) == 0 {
		return fmt.Errorf("no data given and no demo corpus built in: open a labeled file with File › Open data")
	}
	cs.Source = "the built-in demo corpus"
	var warns []corpus.Warning
	var err error
	if cs.All, warns, err = corpus.LoadBytes(demoTrainFile, src.demoTrain, src.opts); err != nil {
		return err
	}
	cs.Warnings = warns
	cs.demoAbs = demoCopy(demoTrainFile, src.demoTrain)
	if len(src.demoTest) > 0 {
		if cs.TestFile, warns, err = corpus.LoadBytes(demoTestFile, src.demoTest, src.opts); err != nil {
			return err
		}
		cs.Warnings = append(cs.Warnings, warns...)
		cs.demoTestAbs = demoCopy(demoTestFile, src.demoTest)
	}
	return nil
}

// demoCopy is the absolute path of the repository's file rel (relative to
// the current folder) when it holds exactly the bytes built in, else "":
// a model trained on the demo corpus then records where a later command
// can read its data again, as telltale train --data records it.
func demoCopy(rel string, built []byte) string {
	// A regular file of the same size only: nothing else is opened (a
	// named pipe's open would wait for a writer).
	if fi, err := os.Stat(rel); err != nil || !fi.Mode().IsRegular() || fi.Size() != int64(len(built)) {
		return ""
	}
	b, err := os.ReadFile(rel)
	if err != nil || !bytes.Equal(b, built) {
		return ""
	}
	return absPath(rel)
}

// readFiles reads the data file and the test file, if any. A named pipe
// (mkfifo) is read once into memory, for the column pickers and the data
// alike, and kept there while the corpus is open.
func (cs *corpusState) readFiles(ctx context.Context, src dataSource) error {
	cs.Source = filepath.Base(src.path)
	var err error
	if cs.pipeData, err = readPipe(ctx, src.path, src.pipeData, src.opts); err != nil {
		return err
	}
	if cs.pipeTest, err = readPipe(ctx, src.testPath, src.pipeTest, src.opts); err != nil {
		return err
	}
	// The column pickers; a file whose header cannot be read is reported
	// by the load below.
	if cs.pipeData != nil {
		cs.Columns, _ = corpus.ColumnsBytes(src.path, cs.pipeData, src.opts)
	} else {
		cs.Columns, _ = corpus.Columns(src.path, src.opts)
	}
	var warns []corpus.Warning
	if cs.All, warns, err = loadFile(src.path, cs.pipeData, src.opts); err != nil {
		return err
	}
	cs.Warnings = warns
	if src.testPath != "" {
		if cs.TestFile, warns, err = loadFile(src.testPath, cs.pipeTest, src.opts); err != nil {
			return err
		}
		cs.Warnings = append(cs.Warnings, warns...)
	}
	return nil
}

// readPipe returns kept if it is not nil, else the content of path when it
// is a named pipe, and nil for any other file, which is read where it lies.
// The pipe is read whole, each line within the readers' record limit
// (corpus.ReadPipe); the wait for its writer, or for more from it, ends when
// ctx is done (the status bar's Stop).
func readPipe(ctx context.Context, path string, kept []byte, opts corpus.Options) ([]byte, error) {
	if kept != nil || path == "" || !inputfile.IsPipe(path) {
		return kept, nil
	}
	data, err := corpus.ReadPipe(ctx, path, opts)
	if errors.Is(err, corpus.ErrTooLong) {
		return nil, err
	}
	if err != nil {
		return nil, fmt.Errorf("corpus: %s: cannot read: %w", path, err)
	}
	if data == nil {
		data = []byte{} // not nil: a pipe that gave nothing was still read
	}
	return data, nil
}

// loadFile reads the corpus at path, from data when it is not nil.
func loadFile(path string, data []byte, opts corpus.Options) (*corpus.Dataset, []corpus.Warning, error) {
	if data != nil {
		return corpus.LoadBytes(path, data, opts)
	}
	return corpus.Load(path, opts)
}

// resplit returns a copy of cs split by plan, with its summary and the
// record of how the splits were made. The splits are those telltale train
// makes of the same data with the same shares and seed: without a test file,
// corpus.Dataset.SplitThree(plan.DevFrac, plan.TestFrac, plan.Seed); with
// one, the test file is the test split and SplitThree(plan.DevFrac, 0,
// plan.Seed) makes the training and dev splits of all of the data.
func (cs *corpusState) resplit(ctx context.Context, plan splitPlan) (*corpusState, error) {
	n := *cs
	n.Plan = plan
	testFrac := plan.TestFrac
	if cs.TestFile != nil {
		testFrac = 0
	}
	n.Train, n.Dev, n.Test = cs.All.SplitThree(plan.DevFrac, testFrac, plan.Seed)
	if cs.TestFile != nil {
		n.Test = cs.TestFile
	}
	n.Record = cs.record(plan.DevFrac, testFrac, plan.Seed, &n)
	if len(n.Train.Examples) == 0 || len(n.Test.Examples) == 0 {
		return nil, fmt.Errorf("%s: too few texts for a training and a test split (%d in all)", cs.Source, len(cs.All.Examples))
	}
	if _, err := n.Test.LabelIndex(n.Train.Labels); err != nil {
		return nil, err
	}
	tok, err := corpus.NewTokenizer(cnn.DefaultRecipe().Tokenizer)
	if err != nil {
		return nil, err
	}
	n.Tok = tok
	// The three splits together, as telltale data summarizes them: a dev
	// text also in the training split is a leak too.
	if len(n.Dev.Examples) > 0 {
		n.Summary = corpus.SummarizeThree(n.Train, n.Dev, n.Test, tok)
	} else {
		n.Summary = corpus.Summarize(n.Train, n.Test, tok)
	}
	n.Lengths = corpus.LengthHistogram(corpus.TokenLengths(n.Train, tok), lengthBins)
	return &n, ctx.Err()
}

// The files the built-in demo corpus is made from (the command embeds
// them), as the splits' record names them.
const (
	demoTrainFile = "testdata/demo/train.csv"
	demoTestFile  = "testdata/demo/test.csv"
)

// record is how split n of cs was made, in the form telltale train writes
// (cnn.SplitRecord): the data file as opened and its absolute path, the test
// file's absolute path and fingerprint, the shares held out, the seed, and
// the data's size and fingerprint, by which a later command finds the same
// splits again (and tells a test file that changed since).
// The demo corpus is named by the files it is made from.
func (cs *corpusState) record(devFrac, testFrac float64, seed uint64, n *corpusState) cnn.SplitRecord {
	r := cnn.SplitRecord{Data: cs.Path, DataAbs: absPath(cs.Path), TestFile: absPath(cs.TestPath), DevFrac: devFrac, TestFrac: testFrac,
		Seed: seed, Examples: len(cs.All.Examples), Fingerprint: cs.All.Fingerprint(),
		Train: len(n.Train.Examples), Dev: len(n.Dev.Examples), Test: len(n.Test.Examples),
		TestPipe: cs.pipeTest != nil} // read once: later commands must not open it again
	if cs.TestFile != nil {
		r.TestFingerprint = cs.TestFile.Fingerprint()
	}
	if cs.Path == "" {
		// The built-in copies of files of the repository: named relative
		// to it, and by their absolute paths where the current folder
		// holds them (demoCopy).
		r.Data, r.DataAbs = demoTrainFile, cs.demoAbs
		if cs.TestFile != nil {
			r.TestFile = demoTestFile
			if cs.demoTestAbs != "" {
				r.TestFile = cs.demoTestAbs
			}
		}
	}
	return r
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

// lengthBins is the most bars of the length plot.
const lengthBins = 30

// splitName is the one name of a split the corpus package calls name.
func splitName(name string) string {
	if name == "train" {
		return "training"
	}
	return name
}
