package main

import (
	"fmt"
	"io"
	"strconv"
	"strings"

	"telltale/cnn"
	"telltale/corpus"
	"telltale/internal/heldout"
	"telltale/internal/wording"
)

// checkData refuses, before training, data that would give a useless
// model: labels that look like texts (more distinct labels than half the
// examples, as when the text and label columns are swapped) and an empty
// dev split, unless --force; dev or test labels the training split lacks;
// an empty vocabulary; and a model too large for the machine's memory. It
// warns of an empty test split, and of a dev or test file that holds
// texts of the training split, or a share of --data that does (held).
func (o *trainOptions) checkData(sp *splits, held heldInTraining, w io.Writer) error {
	all := sp.all
	if n, k := len(all.Examples), len(all.Labels); k > 2 && 2*k > n && !o.force {
		return fmt.Errorf("%s: %d distinct labels among %d examples, fewer than two examples per label: the label column looks like text; "+
			"check that --text-col and --label-col name the right columns, or pass --force to train anyway", o.data, k, n)
	}
	if len(sp.dev.Examples) == 0 && !o.force {
		return fmt.Errorf("the dev split is empty: --dev-frac %g of %s holds out no text of any label (too few examples per label); "+
			"raise --dev-frac, give a dev file with --dev, or pass --force to train every epoch without early stopping", o.split.DevFrac, o.data)
	}
	if len(sp.test.Examples) == 0 && !o.quiet {
		fmt.Fprintf(w, "warning: the test split is empty: --test-frac %g of %s holds out no text of any label; the model will have no test figures: raise --test-frac or give a test file with --test\n",
			o.split.TestFrac, o.data)
	}
	for _, held := range []*corpus.Dataset{sp.dev, sp.test} {
		if _, err := held.LabelIndex(sp.train.Labels); err != nil {
			return err
		}
	}
	if !o.quiet {
		for _, msg := range held.warnings {
			fmt.Fprintf(w, "warning: %s\n", msg)
		}
	}
	return o.checkVocabulary(sp)
}

// heldInTraining is what heldTextsInTraining found: the warnings, and how
// many texts of the dev and test splits are texts of the training split.
type heldInTraining struct {
	warnings  []string
	dev, test int
}

// heldTextsInTraining says, for the dev split and the test split, how
// many of their texts are also texts of the training split (heldout.Copies,
// exact copies or copies but for case and punctuation): such a test split's
// figures are not held-out figures, and such a dev split chooses the epoch
// on texts the model learned. A split given as a file (--dev, --test) is
// named by its file; one held out of --data holds such texts when --data
// holds copies of a text (sharedWarning).
func (o *trainOptions) heldTextsInTraining(sp *splits) heldInTraining {
	var h heldInTraining
	for _, f := range []struct {
		opt, path, which, use string
		ds                    *corpus.Dataset
		n                     *int
	}{
		{"--dev", o.split.Dev, "dev", "the epoch it chooses is chosen on texts the model learned", sp.dev, &h.dev},
		{"--test", o.split.Test, "test", "its figures are not held-out figures", sp.test, &h.test},
	} {
		if *f.n = heldout.Copies(f.ds, sp.train); *f.n == 0 {
			continue
		}
		if f.path == "" {
			h.warnings = append(h.warnings, sharedWarning(f.which, o.data, &sp.record, &o.read, *f.n, len(f.ds.Examples), f.use))
			continue
		}
		h.warnings = append(h.warnings, fmt.Sprintf("%s %s: %d of its %s are texts of the training split of %s (or copies but for case and punctuation): %s; "+
			"take them out of one of the files (%s lists them)",
			f.opt, f.path, *f.n, wording.Texts(len(f.ds.Examples)), o.data, f.use, dataCommand(o.data, nil, &o.read, f.opt, f.path)))
	}
	return h
}

// sharedWarning is the warning that the dev or test split (which) held
// out of data, the splits of rec, holds n texts (of its total) that are
// texts of the training split too: data holds copies of them, and the
// split drew some; use says what follows for the split.
func sharedWarning(which, data string, rec *cnn.SplitRecord, r *readOptions, n, total int, use string) string {
	return fmt.Sprintf("the %s split held out of %s: %d of its %s are texts of the training split as well (%s holds copies of them, exact or but for case and punctuation): %s; "+
		"keep one copy of each text in %s (%s lists the copies as LEAK)",
		which, data, n, wording.Texts(total), data, use, data, dataCommand(data, rec, r))
}

// dataCommand is the telltale data command, quoted for a shell, that
// lists the copies in data: with extra (a split file the user gave) or the
// options that make rec's dev and test splits again (those not at their
// default), and the reading options r sets.
func dataCommand(data string, rec *cnn.SplitRecord, r *readOptions, extra ...string) string {
	args := append([]string{"telltale", "data", "--data", data}, extra...)
	if rec != nil && len(extra) == 0 {
		for _, s := range []struct {
			opt, file string
			frac, def float64
		}{{"dev", rec.DevFile, rec.DevFrac, cnn.DefaultDevFrac}, {"test", rec.TestFile, rec.TestFrac, cnn.DefaultTestFrac}} {
			switch {
			case s.file != "":
				args = append(args, "--"+s.opt, s.file)
			case s.frac != s.def:
				args = append(args, "--"+s.opt+"-frac", fmtFloat(s.frac))
			}
		}
		if rec.Seed != cnn.DefaultRecipe().Train.Seed && (rec.DevFrac > 0 || rec.TestFrac > 0) {
			args = append(args, "--seed", strconv.FormatUint(rec.Seed, 10))
		}
	}
	return shellJoin(append(args, r.args()...))
}

// checkVocabulary tokenizes the training split as training will and
// refuses an empty vocabulary and a model too large for memory.
func (o *trainOptions) checkVocabulary(sp *splits) error {
	cfg := o.recipe.tokenizerConfig()
	cfg.Subword = false // the word vocabulary; pieces are added to it later
	tok, err := corpus.NewTokenizer(cfg)
	if err != nil {
		return err
	}
	counts := map[string]int{}
	longest, pairs := 1, 0
	for _, e := range sp.train.Examples {
		toks := tok.Tokenize(e.Text)
		longest = max(longest, len(toks))
		for _, t := range toks {
			counts[t.Text]++
		}
		if n := len(toks); o.recipe.MaxLen > 0 && n > o.recipe.MaxLen {
			pairs += o.recipe.MaxLen - 1
		} else if n > 1 {
			pairs += n - 1
		}
	}
	words, top := 0, 0
	for _, c := range counts {
		top = max(top, c)
		if c >= o.recipe.MinCount {
			words++
		}
	}
	if words == 0 && !o.recipe.Subword {
		return fmt.Errorf("the vocabulary is empty: no word occurs %s in the training split (the most frequent occurs %s): lower --min-count",
			wording.Count(o.recipe.MinCount, "time", "times"), wording.Count(top, "time", "times"))
	}
	vocab := 2 + words
	if o.recipe.Subword {
		vocab += 2000 // the default number of subword pieces (corpus.TokenizerConfig.SubwordSize)
	}
	return o.recipe.checkSize(vocab, len(sp.train.Labels), longest, o.threads.N, pairs)
}

// maskTrainingText takes the cue tokens or patterns listed in file out of
// every training text and returns the masked copy and the patterns (as
// the recipe records them, cnn.TrainConfig.MaskTokens). It says how many
// matches were taken out, and how many cnn.TrainText will take out of dev
// (which may be nil) too, and warns of a plain-token line that looks like
// a regular expression and matches nothing (the slashes were forgotten).
func maskTrainingText(train, dev *corpus.Dataset, file string, w io.Writer, quiet bool) (*corpus.Dataset, []string, error) {
	cm, err := corpus.LoadCueMasker(file)
	if err != nil {
		return nil, nil, err
	}
	out := *train
	out.Examples = make([]corpus.Example, len(train.Examples))
	total := 0
	for i, e := range train.Examples {
		var n int
		e.Text, n = cm.Mask(e.Text)
		total += n
		out.Examples[i] = e
	}
	if quiet {
		return &out, cm.Patterns(), nil
	}
	fromDev := ""
	if dev != nil && len(dev.Examples) > 0 {
		n := 0
		for _, e := range dev.Examples {
			_, k := cm.Mask(e.Text)
			n += k
		}
		fromDev = fmt.Sprintf(" and %s out of the dev text, on which the epoch is chosen", wording.Count(n, "match", "matches"))
	}
	fmt.Fprintf(w, "mask-tokens: %s of the patterns in %s taken out of the training text%s\n", wording.Count(total, "match", "matches"), file, fromDev)
	for _, p := range cm.Patterns() {
		if strings.HasPrefix(p, "/") || !strings.ContainsAny(p, `\[]{}()*+?|^$`) {
			continue
		}
		if one, err := corpus.MaskTokens([]string{p}); err == nil && !matchesAny(one, train) {
			fmt.Fprintf(w, "warning: %s: the pattern %q matches nothing: without slashes it is a plain token, not a regular expression; write /%s/ for one\n",
				file, clip(p), clip(p))
		}
	}
	return &out, cm.Patterns(), nil
}

// matchesAny reports whether cm matches in any text of d.
func matchesAny(cm *corpus.CueMasker, d *corpus.Dataset) bool {
	for _, e := range d.Examples {
		if _, n := cm.Mask(e.Text); n > 0 {
			return true
		}
	}
	return false
}
