package gui

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"fyne.io/fyne/v2/data/binding"

	"telltale/cnn"
)

// recipeForm holds the training form's values as the user typed them. It
// starts from cnn.DefaultRecipe and offers what `telltale train` offers.
type recipeForm struct {
	widths, maps, dim, epochs, patience, dropout, maxNorm   binding.String
	keepFrom                                                binding.String
	optimizer, lr, batch, minCount, seed, devFrac, testFrac binding.String
	tokenDropout, wordDropout, classWeight                  binding.String
	// baseline: fit the linear baseline beside the CNN (cnn.Recipe.Baseline).
	baseline binding.Bool
	// chars: character-aware word vectors beside the word table's
	// (cnn.Config.Chars, train --chars, with its default sizes); the
	// embedding dimension stays the word table's, as on the command line.
	chars binding.Bool
	// wide: the word-weight path beside the filters (cnn.Config.Wide,
	// train --wide, its learning rate cnn.DefaultWideLR times the rest's).
	wide binding.Bool
	// wideBigrams: bigram weights in the word-weight path
	// (cnn.Config.WideBigrams, train --wide-bigrams); only with wide.
	wideBigrams binding.Bool
	// wideFit: the word weights start at the logistic regression fitted on
	// them (cnn.TrainConfig.WideFit, train --wide-fit); only with wide.
	wideFit binding.Bool
	// wideFitC: the fitted start's C (cnn.TrainConfig.WideFitC, train
	// --wide-fit-c); 0 chooses it on dev. Only with wide and wideFit.
	wideFitC binding.String
}

// The class weights the form offers, as `telltale train --class-weight`
// names them ("none" is cnn.TrainConfig's "").
const (
	classWeightNone     = "none"
	classWeightBalanced = "balanced"
)

// formatFloat writes a recipe number as the user would type it.
func formatFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// formatFloat32 writes v in its shortest float32 form: 0.3, not the
// 0.30000001192092896 of its float64 conversion.
func formatFloat32(v float32) string { return strconv.FormatFloat(float64(v), 'g', -1, 32) }

func newRecipeForm() *recipeForm {
	r := &recipeForm{}
	for _, p := range r.fields() {
		*p = binding.NewString()
	}
	r.baseline = binding.NewBool()
	r.chars = binding.NewBool()
	r.wide = binding.NewBool()
	r.wideBigrams = binding.NewBool()
	r.wideFit = binding.NewBool()
	r.reset()
	return r
}

// fields lists the form's values.
func (r *recipeForm) fields() []*binding.String {
	return []*binding.String{&r.widths, &r.maps, &r.dim, &r.epochs, &r.patience, &r.keepFrom, &r.dropout, &r.maxNorm,
		&r.optimizer, &r.lr, &r.batch, &r.minCount, &r.seed, &r.devFrac, &r.testFrac,
		&r.tokenDropout, &r.wordDropout, &r.classWeight, &r.wideFitC}
}

// reset puts cnn.DefaultRecipe and the default split shares in the form.
func (r *recipeForm) reset() {
	d := cnn.DefaultRecipe()
	var ws []string
	for _, w := range d.Model.Widths {
		ws = append(ws, strconv.Itoa(w))
	}
	// The rate field starts empty: the default recipe's rate for its
	// optimizer, the optimizer's own for the other (parse).
	lr := ""
	for b, v := range map[binding.String]string{
		r.widths: strings.Join(ws, ","), r.maps: strconv.Itoa(d.Model.Filters), r.dim: strconv.Itoa(d.Model.Dim),
		r.epochs: strconv.Itoa(d.Train.Epochs), r.patience: strconv.Itoa(d.Train.Patience),
		r.keepFrom: strconv.Itoa(d.Train.KeepFrom),
		r.dropout:  formatFloat32(d.Model.Dropout), r.maxNorm: formatFloat32(d.Model.MaxNorm),
		r.optimizer: d.Train.Optimizer, r.lr: lr, r.batch: strconv.Itoa(d.Train.Batch),
		r.minCount: strconv.Itoa(d.Tokenizer.MinCount), r.seed: strconv.FormatUint(d.Train.Seed, 10),
		r.devFrac: formatFloat(cnn.DefaultDevFrac), r.testFrac: formatFloat(cnn.DefaultTestFrac),
		r.tokenDropout: formatFloat(d.Train.TokenDropout), r.wordDropout: formatFloat(d.Train.WordDropout),
		r.classWeight: classWeightNone, r.wideFitC: formatFloat(d.Train.WideFitC),
	} {
		_ = b.Set(v)
	}
	if d.Train.ClassWeight != "" {
		_ = r.classWeight.Set(d.Train.ClassWeight)
	}
	_ = r.baseline.Set(d.Baseline != nil)
	_ = r.chars.Set(d.Model.Chars != nil)
	_ = r.wide.Set(d.Model.Wide)
	_ = r.wideBigrams.Set(d.Model.WideBigrams)
	_ = r.wideFit.Set(d.Train.WideFit)
}

// parseWidths reads filter widths: whole numbers separated by commas.
func parseWidths(s string) ([]int, error) {
	var ws []int
	for _, f := range strings.Split(s, ",") {
		w, err := strconv.Atoi(strings.TrimSpace(f))
		if err != nil {
			return nil, errors.New("whole numbers, e.g. 3,4,5")
		}
		ws = append(ws, w)
	}
	return ws, nil
}

// The checks of the form's entries as they are typed (the form marks an
// entry that fails one, where it would show a tick, and shows the message
// in place of the hint, on one line: the messages are as short as the
// hints, so that the form keeps its width): the number's form only; parse
// checks the ranges when Train is pressed.
func checkWidths(s string) error {
	if _, err := parseWidths(s); err != nil {
		return errors.New("whole numbers, e.g. 3,4,5")
	}
	return nil
}

func checkWhole(s string) error {
	if _, err := strconv.Atoi(strings.TrimSpace(s)); err != nil {
		return errors.New("a whole number, e.g. 10")
	}
	return nil
}

func checkReal(s string) error {
	v, err := strconv.ParseFloat(strings.TrimSpace(s), 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		return errors.New("a number, e.g. 0.5")
	}
	return nil
}

// checkRealOrEmpty is checkReal where empty means the default.
func checkRealOrEmpty(s string) error {
	if strings.TrimSpace(s) == "" {
		return nil
	}
	return checkReal(s)
}

// fieldErrors collects the form's problems, each naming its field and the fix.
type fieldErrors []error

func (fe *fieldErrors) whole(b binding.String, name, hint string) int {
	s := strings.TrimSpace(stringGet(b))
	v, err := strconv.Atoi(s)
	if err != nil {
		*fe = append(*fe, fmt.Errorf("%s %q is not a whole number: %s", name, s, hint))
	}
	return v
}

// real reads a finite number: NaN and infinities mean nothing in a recipe.
func (fe *fieldErrors) real(b binding.String, name, hint string) float64 {
	s := strings.TrimSpace(stringGet(b))
	v, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
		*fe = append(*fe, fmt.Errorf("%s %q is not a finite number: %s", name, s, hint))
		return 0
	}
	return v
}

// plan reads the split shares and the seed.
func (r *recipeForm) plan() (splitPlan, error) {
	var fe fieldErrors
	p := r.readPlan(&fe)
	return p, errors.Join(fe...)
}

func (r *recipeForm) readPlan(fe *fieldErrors) splitPlan {
	seed := fe.whole(r.seed, "seed", "any whole number of 0 or more, e.g. 1")
	if seed < 0 {
		*fe = append(*fe, fmt.Errorf("seed %d: use a whole number of 0 or more", seed))
		seed = 0
	}
	return splitPlan{
		DevFrac:  fe.real(r.devFrac, "dev share", fmt.Sprintf("a fraction in (0, 0.5], e.g. %g", cnn.DefaultDevFrac)),
		TestFrac: fe.real(r.testFrac, "test share", fmt.Sprintf("a fraction in (0, 0.5], e.g. %g", cnn.DefaultTestFrac)),
		Seed:     uint64(seed),
	}
}

// parse checks the form and returns the recipe and the split plan; a test
// file, when open, makes the test share unused. The errors name each field
// and its fix.
func (r *recipeForm) parse(withTestFile bool) (cnn.Recipe, splitPlan, error) {
	rec := cnn.DefaultRecipe()
	var fe fieldErrors
	widths, err := parseWidths(stringGet(r.widths))
	if err != nil {
		fe = append(fe, fmt.Errorf("filter widths %q: %w", stringGet(r.widths), err))
	}
	rec.Model.Widths = widths
	rec.Model.Filters = fe.whole(r.maps, "feature maps per width", "e.g. 100")
	rec.Model.Dim = fe.whole(r.dim, "embedding dimension", "e.g. 128")
	rec.Model.Dropout = float32(fe.real(r.dropout, "dropout", "a rate in [0, 1), e.g. 0.5"))
	rec.Model.MaxNorm = float32(fe.real(r.maxNorm, "max-norm", "0 turns it off; Kim (2014) used 3"))
	rec.Train.Epochs = fe.whole(r.epochs, "epochs", "e.g. 10")
	rec.Train.Batch = fe.whole(r.batch, "batch size", "e.g. 50")
	rec.Train.Optimizer = stringGet(r.optimizer)
	if s := strings.TrimSpace(stringGet(r.lr)); s != "" {
		rec.Train.LR = fe.real(r.lr, "learning rate", "a positive number, or empty for the default")
	} else if rec.Train.Optimizer != cnn.DefaultRecipe().Train.Optimizer {
		// Empty: the default recipe's rate is its optimizer's (Adam);
		// another optimizer gets its own usual default, as on the command
		// line without --lr.
		rec.Train.LR = 0
	}
	// As on the command line: 0 (or less) never stops early.
	if rec.Train.Patience = fe.whole(r.patience, "patience", "epochs without a better dev macro-F1 before stopping; 0 never stops"); rec.Train.Patience <= 0 {
		rec.Train.Patience = -1
	}
	// As train's --keep-from: 0 keeps any epoch, and one beyond the epochs
	// means the last (cnn.TrainConfig.KeepFrom).
	if rec.Train.KeepFrom = fe.whole(r.keepFrom, "first epoch kept", "0 keeps any, e.g. 5"); rec.Train.KeepFrom < 0 {
		fe = append(fe, fmt.Errorf("first epoch kept %d: give 0 (any epoch) or a later one, e.g. 5", rec.Train.KeepFrom))
	}
	rec.Tokenizer.MinCount = fe.whole(r.minCount, "minimum word count", "e.g. 1 or 2")
	rec.Train.TokenDropout = fe.real(r.tokenDropout, "token dropout", "a probability in [0, 1); 0 is off")
	rec.Train.WordDropout = fe.real(r.wordDropout, "word dropout α", "0 (off) or more, e.g. 0.25")
	switch cw := stringGet(r.classWeight); cw {
	case classWeightNone:
		rec.Train.ClassWeight = ""
	case classWeightBalanced:
		rec.Train.ClassWeight = cw
	default:
		fe = append(fe, fmt.Errorf("class weight %q: choose none or balanced", cw))
	}
	if on, _ := r.baseline.Get(); !on {
		rec.Baseline = nil
	}
	if on, _ := r.chars.Get(); on {
		rec.Model.Chars = &cnn.CharConfig{Filters: cnn.DefaultCharFilters, Width: cnn.DefaultCharWidth,
			Dim: cnn.DefaultCharDim, MaxChars: cnn.DefaultMaxChars}
		rec.Model.Dim += rec.Model.Chars.Filters // Model.Dim is the whole word vector's width
	}
	rec.Model.WideBigrams, rec.Train.WideFit, rec.Train.WideFitC = false, false, 0
	if rec.Model.Wide, _ = r.wide.Get(); rec.Model.Wide {
		rec.Train.WideLR = cnn.DefaultWideLR
		// Word pairs and the fitted start count only with word weights, as
		// train's --wide=false turns them off; the view disables the
		// checks meanwhile.
		rec.Model.WideBigrams, _ = r.wideBigrams.Get()
		rec.Train.WideFit, _ = r.wideFit.Get()
		if rec.Train.WideFit { // the C counts only with the fitted start, as train's --wide-fit-c
			rec.Train.WideFitC = fe.real(r.wideFitC, "fitted start's C", "0 chooses it on dev, or a positive number, e.g. 10")
			if rec.Train.WideFitC < 0 {
				fe = append(fe, fmt.Errorf("fitted start's C %g: give a positive number, or 0 to choose it on dev", rec.Train.WideFitC))
			}
		}
	}
	plan := r.readPlan(&fe)
	rec.Train.Seed = plan.Seed
	if len(fe) == 0 {
		fe.checkRecipe(rec, plan, withTestFile)
	}
	if len(fe) > 0 {
		return rec, plan, fmt.Errorf("the training recipe needs fixing:\n%w", errors.Join(fe...))
	}
	return rec, plan, nil
}

// checkRecipe adds what the model's and trainer's own checks say.
func (fe *fieldErrors) checkRecipe(rec cnn.Recipe, plan splitPlan, withTestFile bool) {
	switch {
	case rec.Train.Epochs < 1 || rec.Train.Batch < 1:
		*fe = append(*fe, fmt.Errorf("epochs and batch size must be at least 1 (got %d and %d)", rec.Train.Epochs, rec.Train.Batch))
	case rec.Train.LR < 0:
		*fe = append(*fe, fmt.Errorf("learning rate %g: must be positive, or empty for the optimizer's default", rec.Train.LR))
	case rec.Tokenizer.MinCount < 1:
		*fe = append(*fe, fmt.Errorf("minimum word count %d: must be at least 1", rec.Tokenizer.MinCount))
	}
	// The model's own checks, with placeholder sizes that always pass.
	c := rec.Model
	c.VocabSize, c.Classes = 2, 2
	if err := c.Validate(); err != nil {
		*fe = append(*fe, err)
	}
	if _, err := rec.Train.WithDefaults(); err != nil {
		*fe = append(*fe, err)
	}
	if err := plan.check(withTestFile); err != nil {
		*fe = append(*fe, err)
	}
}

// setPlan puts a split plan in the form (the plan an opened model records).
func (r *recipeForm) setPlan(p splitPlan) {
	_ = r.devFrac.Set(formatFloat(p.DevFrac))
	_ = r.testFrac.Set(formatFloat(p.TestFrac))
	_ = r.seed.Set(strconv.FormatUint(p.Seed, 10))
}
