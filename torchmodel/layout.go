package torchmodel

import (
	"fmt"
	"slices"
	"strings"

	"telltale/torchmodel/statedict"
)

// Layout says which tensors of a state_dict are which part of the sentence
// CNN. Keys are full state_dict keys of weights; a weight's bias is the key
// with its last part "weight" replaced by "bias", and may be absent (no
// bias).
type Layout struct {
	// Embeddings are the embedding tables: one, or two for the multichannel
	// variant of Kim (2014), in channel order.
	Embeddings []string
	// Convs are the convolutions, in the order their pooled outputs are
	// concatenated before the output layer.
	Convs []string
	// Output is the output layer.
	Output string
	// Wide, when not empty, is the word-weight table of the wide path
	// ([vocabulary size, outputs], an nn.EmbeddingBag(mode="mean") whose
	// mean over a text's non-padding ids is added to the logits); optional.
	Wide string
	// Chars, when not empty, is the module prefix of a character layer
	// (CharsPrefix, as StateDict writes it; see chars.go for its keys);
	// optional. It needs exactly one embedding table.
	Chars string
	// Bigrams, when not empty, is the bigram weight table of the wide path
	// (WideBigramKey, found by name as StateDict writes it, with its keys
	// BigramKeysKey); optional, only with Wide.
	Bigrams string
}

// IsZero reports whether no part is named.
func (l Layout) IsZero() bool {
	return len(l.Embeddings) == 0 && len(l.Convs) == 0 && l.Output == "" && l.Wide == "" && l.Chars == "" && l.Bigrams == ""
}

// Complete reports whether every part but the optional wide table is named.
func (l Layout) Complete() bool { return len(l.Embeddings) > 0 && len(l.Convs) > 0 && l.Output != "" }

// String describes the layout in one line, as Info records it.
func (l Layout) String() string {
	s := fmt.Sprintf("embedding %s; convolutions %s; output %s",
		strings.Join(l.Embeddings, " + "), strings.Join(l.Convs, ", "), l.Output)
	if l.Wide != "" {
		s += "; wide " + l.Wide
	}
	if l.Chars != "" {
		s += "; characters " + l.Chars
	}
	if l.Bigrams != "" {
		s += "; bigrams " + l.Bigrams
	}
	return s
}

// biasKey is the key of the bias that goes with weight key w ("" when w
// does not end in "weight").
func biasKey(w string) string {
	if s, ok := strings.CutSuffix(w, "weight"); ok {
		return s + "bias"
	}
	return ""
}

// DetectLayout finds the parts of a sentence CNN in sd by shape and order.
// Keys are grouped by module (the key up to its last dot); every module
// must hold a weight and at most a bias. A 2-D weight without a bias is an
// embedding table, a 2-D weight with a bias the output layer, a 3-D weight
// a Conv1d and a 4-D weight a Conv2d. The wide path's word-weight table
// is the 2-D weight WideKey ("wide.weight", as Export writes it) without a
// bias, or else found by shape (wideByShape). The keys of a character layer
// are found by name (CharsPrefix and the keys of chars.go, as Export writes
// them). Convolutions and tables are taken in
// the order of the file, which is the order the modules were created in
// (for a ModuleList, its order). Anything else — another kind of parameter,
// a second linear layer, a tensor of another rank, another buffer — is
// refused naming its key and shape.
func DetectLayout(sd *statedict.StateDict, file string) (Layout, error) {
	var l Layout
	var outputs []string
	if _, ok := sd.Tensors[charsConv]; ok {
		l.Chars = CharsPrefix
	}
	if _, ok := sd.Tensors[WideBigramKey]; ok {
		l.Bigrams = WideBigramKey
	}
	for _, k := range sd.Keys {
		t := sd.Tensors[k]
		if l.Bigrams != "" && (k == WideBigramKey || k == BigramKeysKey) {
			continue
		}
		if strings.HasPrefix(k, CharsPrefix+".") {
			if l.Chars == "" {
				return l, layoutErr(file, k, t, "part of a character layer without its filters %s: the layer needs the keys %s", charsConv, strings.Join(charsKeys, ", "))
			}
			continue
		}
		dot := strings.LastIndexByte(k, '.')
		param := k[dot+1:]
		switch {
		case param == "bias":
			w := k[:dot+1] + "weight"
			if _, ok := sd.Tensors[w]; !ok {
				return l, layoutErr(file, k, t, "a bias without a weight %s", w)
			}
			continue
		case param != "weight":
			return l, layoutErr(file, k, t, "a parameter a sentence CNN (embedding, convolutions, ReLU, max over time, one linear layer) does not have%s", hint(param))
		}
		_, hasBias := sd.Tensors[biasKey(k)]
		if k == WideKey && len(t.Shape) == 2 && !hasBias {
			l.Wide = k
			continue
		}
		switch len(t.Shape) {
		case 2:
			if hasBias {
				outputs = append(outputs, k)
			} else {
				l.Embeddings = append(l.Embeddings, k)
			}
		case 3, 4:
			l.Convs = append(l.Convs, k)
		default:
			return l, layoutErr(file, k, t, "a %d-D weight: a sentence CNN has 2-D (embedding, linear), 3-D (Conv1d) and 4-D (Conv2d) weights", len(t.Shape))
		}
	}
	switch {
	case len(outputs) > 1:
		return l, layoutErr(file, outputs[1], sd.Tensors[outputs[1]], "a second linear layer after %s: telltale's sentence CNN has one output layer", outputs[0])
	case len(outputs) == 0:
		return l, fmt.Errorf("torchmodel: %s: no linear layer (a 2-D weight with a bias): if the output layer has no bias, name the parts with the layout option (embedding, convolutions, output keys): %w", file, ErrLayout)
	case len(l.Convs) == 0:
		return l, fmt.Errorf("torchmodel: %s: no convolution (a 3-D or 4-D weight): not a sentence CNN: %w", file, ErrLayout)
	}
	l.Output = outputs[0]
	if l.Wide == "" {
		var err error
		if l, err = wideByShape(sd, l, file); err != nil {
			return l, err
		}
	}
	switch {
	case len(l.Embeddings) == 0:
		return l, fmt.Errorf("torchmodel: %s: no embedding table (a 2-D weight without a bias): %w", file, ErrLayout)
	case len(l.Embeddings) > 2:
		return l, fmt.Errorf("torchmodel: %s: %d tables (%s): a sentence CNN has one, or two in the multichannel variant; name them with the layout option: %w",
			file, len(l.Embeddings), strings.Join(l.Embeddings, ", "), ErrLayout)
	}
	return l, nil
}

// wideByShape finds the wide path's table among l's embedding tables when
// no key is named WideKey: a table of shape [rows, outputs of l.Output]
// whose removal leaves tables that fit the first convolution (one table,
// or two of equal shape for the multichannel variant, of the rows of the
// candidate and of the dimension the convolution reads, less the
// character filters). One such table becomes l.Wide; with several, which
// is which cannot be told from shapes, and the error names them.
func wideByShape(sd *statedict.StateDict, l Layout, file string) (Layout, error) {
	outs := sd.Tensors[l.Output].Shape[0]
	var fits []string
	for i, k := range l.Embeddings {
		t := sd.Tensors[k]
		if t.Data == nil || t.Shape[1] != outs {
			continue
		}
		rest := slices.Concat(l.Embeddings[:i], l.Embeddings[i+1:])
		if tablesFit(sd, rest, t.Shape[0], sd.Tensors[l.Convs[0]], l.Chars != "") {
			fits = append(fits, k)
		}
	}
	switch len(fits) {
	case 0:
		return l, nil
	case 1:
		l.Wide = fits[0]
		l.Embeddings = slices.DeleteFunc(slices.Clone(l.Embeddings), func(k string) bool { return k == fits[0] })
		return l, nil
	}
	return l, fmt.Errorf("torchmodel: %s: keys %s are each 2-D without a bias, of shape [vocabulary, %d outputs], and each could be the wide word-weight table beside the embedding: rename the wide table's key to %s in your state_dict: %w",
		file, strings.Join(fits, " and "), outs, WideKey, ErrLayout)
}

// tablesFit reports whether the tables keys are the embedding of conv: one
// table, or two of the same shape, each of the given rows, whose
// dimensions (with a character layer's filters, when chars) are the
// convolution's input.
func tablesFit(sd *statedict.StateDict, keys []string, rows int, conv *statedict.Tensor, chars bool) bool {
	if len(keys) < 1 || len(keys) > 2 || (chars && len(keys) != 1) {
		return false
	}
	first := sd.Tensors[keys[0]].Shape
	for _, k := range keys {
		if sh := sd.Tensors[k].Shape; !slices.Equal(sh, first) || sh[0] != rows {
			return false
		}
	}
	extra := 0
	if chars {
		extra = sd.Tensors[charsConv].Shape[0]
	}
	switch len(conv.Shape) {
	case 3:
		return len(keys)*first[1]+extra == conv.Shape[1]
	case 4:
		return len(keys) == conv.Shape[1] && first[1]+extra == conv.Shape[3]
	}
	return false
}

// hint names the module a parameter name usually comes from.
func hint(param string) string {
	switch {
	case param == "running_mean" || param == "running_var" || param == "num_batches_tracked":
		return " (batch normalisation)"
	case strings.HasPrefix(param, "weight_ih") || strings.HasPrefix(param, "weight_hh") || strings.HasPrefix(param, "bias_ih") || strings.HasPrefix(param, "bias_hh"):
		return " (a recurrent layer)"
	case strings.HasPrefix(param, "in_proj"):
		return " (attention)"
	}
	return ""
}

func layoutErr(file, key string, t *statedict.Tensor, format string, args ...any) error {
	return fmt.Errorf("torchmodel: %s: key %s (shape %v): %s: %w", file, key, shapeOf(t), fmt.Sprintf(format, args...), ErrLayout)
}

func shapeOf(t *statedict.Tensor) []int {
	if t == nil {
		return nil
	}
	return t.Shape
}

// weights are the parts of a sentence CNN taken from a state_dict, in
// telltale's layout (see cnn.Model).
type weights struct {
	vocab, dim    int // rows of the (combined) table; its dimension (tables × table dimension)
	emb           []float32
	widths        []int
	filters       int
	convW, convB  [][]float32
	classes       int
	outW, outB    []float32
	sigmoidOutput bool      // one output unit, read as two classes (logits 0 and z)
	wide          []float32 // the wide path's table [word][class] (vocab × classes), or nil
	bigrams       *bigramWeights
	chars         *charWeights
}

// mapWeights checks every shape of the layout against the others and
// converts the tensors to telltale's layout. Every key of sd must be used.
func mapWeights(sd *statedict.StateDict, l Layout, file string) (*weights, error) {
	used := map[string]bool{}
	get := func(key, part string) (*statedict.Tensor, error) {
		t, ok := sd.Tensors[key]
		if !ok {
			return nil, fmt.Errorf("torchmodel: %s: no key %s (named as the %s); the file's keys are %s: %w", file, key, part, strings.Join(sd.Keys, ", "), ErrLayout)
		}
		if used[key] {
			return nil, layoutErr(file, key, t, "named twice in the layout")
		}
		if t.Data == nil {
			return nil, layoutErr(file, key, t, "holds %s values, not floating-point weights", t.Dtype)
		}
		used[key] = true
		return t, nil
	}
	bias := func(weight string, n int) ([]float32, error) {
		bk := biasKey(weight)
		t, ok := sd.Tensors[bk]
		if bk == "" || !ok {
			return make([]float32, n), nil
		}
		if _, err := get(bk, "bias"); err != nil {
			return nil, err
		}
		if len(t.Shape) != 1 || t.Shape[0] != n {
			return nil, layoutErr(file, bk, t, "the bias of %s needs shape [%d]", weight, n)
		}
		return t.Data, nil
	}
	named := map[string]bool{}
	parts := slices.Concat(l.Embeddings, l.Convs, []string{l.Output})
	if l.Wide != "" {
		parts = append(parts, l.Wide)
	}
	if l.Chars != "" {
		for _, k := range charsKeys {
			named[k] = true
		}
	}
	if l.Bigrams != "" {
		named[l.Bigrams], named[BigramKeysKey] = true, true
	}
	for _, k := range parts {
		named[k] = true
		if k != l.Wide { // the wide table has no bias
			named[biasKey(k)] = true
		}
		if _, ok := sd.Tensors[k]; !ok {
			return nil, fmt.Errorf("torchmodel: %s: no key %s (named in the layout); the file's keys are %s: %w", file, k, strings.Join(sd.Keys, ", "), ErrLayout)
		}
	}
	for _, k := range sd.Keys {
		if !named[k] {
			return nil, layoutErr(file, k, sd.Tensors[k], "not part of the layout (%s): telltale's sentence CNN has no other parameters", l)
		}
	}
	w := &weights{}
	if err := w.tables(sd, l, file, get); err != nil {
		return nil, err
	}
	if l.Chars != "" {
		if err := w.charLayer(sd, l, file, get, used); err != nil {
			return nil, err
		}
	}
	if err := w.convolutions(l, file, get, bias); err != nil {
		return nil, err
	}
	if err := w.output(l, file, get, bias); err != nil {
		return nil, err
	}
	if err := w.wideTable(l, file, get); err != nil {
		return nil, err
	}
	if err := w.bigramTable(sd, l, file, get); err != nil {
		return nil, err
	}
	return w, nil
}

// tables reads the embedding tables; two tables become one table whose rows
// are the two rows side by side (channel 0 first).
func (w *weights) tables(sd *statedict.StateDict, l Layout, file string, get func(string, string) (*statedict.Tensor, error)) error {
	if n := len(l.Embeddings); n < 1 || n > 2 {
		return fmt.Errorf("torchmodel: %s: %d embedding tables named: give one, or two for the multichannel variant: %w", file, n, ErrLayout)
	}
	var ts []*statedict.Tensor
	for _, k := range l.Embeddings {
		t, err := get(k, "embedding table")
		if err != nil {
			return err
		}
		if len(t.Shape) != 2 || t.Shape[0] < 2 || t.Shape[1] < 1 {
			return layoutErr(file, k, t, "an embedding table needs shape [vocabulary size, dimension]")
		}
		if len(ts) > 0 && !slices.Equal(t.Shape, ts[0].Shape) {
			return layoutErr(file, k, t, "the two tables of the multichannel variant need the same shape (%s is %v)", l.Embeddings[0], ts[0].Shape)
		}
		ts = append(ts, t)
	}
	v, d := ts[0].Shape[0], ts[0].Shape[1]
	w.vocab, w.dim = v, d*len(ts)
	if len(ts) == 1 {
		w.emb = ts[0].Data
		return nil
	}
	w.emb = make([]float32, v*w.dim)
	for r := 0; r < v; r++ {
		for c, t := range ts {
			copy(w.emb[r*w.dim+c*d:r*w.dim+(c+1)*d], t.Data[r*d:(r+1)*d])
		}
	}
	return nil
}

// convolutions reads each convolution into telltale's [filter][slot][dim]
// layout. Conv1d(D, m, k) has weight [m, D, k] over the table's D
// components; Conv2d(c, m, (k, d)) has weight [m, c, k, d] over c channels
// (tables) of dimension d, whose component j of channel ch is component
// ch·d + j of the combined table.
func (w *weights) convolutions(l Layout, file string, get func(string, string) (*statedict.Tensor, error), bias func(string, int) ([]float32, error)) error {
	tables := len(l.Embeddings)
	d := w.dim / tables
	for _, k := range l.Convs {
		t, err := get(k, "convolution")
		if err != nil {
			return err
		}
		m := t.Shape[0]
		var width int
		W := make([]float32, t.Numel())
		switch {
		case len(t.Shape) == 3 && t.Shape[1] == w.dim:
			width = t.Shape[2]
			for f := 0; f < m; f++ {
				for s := 0; s < width; s++ {
					for j := 0; j < w.dim; j++ {
						W[(f*width+s)*w.dim+j] = t.Data[(f*w.dim+j)*width+s]
					}
				}
			}
		case len(t.Shape) == 4 && t.Shape[1] == tables && t.Shape[3] == d:
			width = t.Shape[2]
			for f := 0; f < m; f++ {
				for ch := 0; ch < tables; ch++ {
					for s := 0; s < width; s++ {
						src := t.Data[((f*tables+ch)*width+s)*d:][:d]
						copy(W[(f*width+s)*w.dim+ch*d:][:d], src)
					}
				}
			}
		case len(t.Shape) == 3:
			return layoutErr(file, k, t, "a Conv1d over %d input channels; the embedding (%s) gives %d: need shape [filters, %d, width]", t.Shape[1], strings.Join(l.Embeddings, " + "), w.dim, w.dim)
		case len(t.Shape) == 4:
			return layoutErr(file, k, t, "a Conv2d needs shape [filters, %d, width, %d] for %d table(s) of dimension %d", tables, d, tables, d)
		default:
			return layoutErr(file, k, t, "a convolution weight is 3-D (Conv1d) or 4-D (Conv2d)")
		}
		if width < 1 || width > 32 {
			return layoutErr(file, k, t, "filter width %d: telltale reads widths 1 to 32", width)
		}
		if m < 1 || (w.filters > 0 && m != w.filters) {
			return layoutErr(file, k, t, "%d filters where %s has %d: telltale needs the same number of filters for every width", m, l.Convs[0], w.filters)
		}
		w.filters = m
		b, err := bias(k, m)
		if err != nil {
			return err
		}
		w.widths = append(w.widths, width)
		w.convW = append(w.convW, W)
		w.convB = append(w.convB, b)
	}
	return nil
}

// output reads the linear layer [classes, filters·widths]. One output unit
// (a sigmoid classifier) becomes two classes with logits 0 and z, whose
// softmax is (1−σ(z), σ(z)): the same probabilities.
func (w *weights) output(l Layout, file string, get func(string, string) (*statedict.Tensor, error), bias func(string, int) ([]float32, error)) error {
	t, err := get(l.Output, "output layer")
	if err != nil {
		return err
	}
	nf := w.filters * len(w.widths)
	if len(t.Shape) != 2 || t.Shape[1] != nf || t.Shape[0] < 1 {
		return layoutErr(file, l.Output, t, "the output layer needs shape [classes, %d] (%d filters × %d widths)", nf, w.filters, len(w.widths))
	}
	c := t.Shape[0]
	b, err := bias(l.Output, c)
	if err != nil {
		return err
	}
	if c == 1 {
		w.sigmoidOutput = true
		w.classes = 2
		w.outW = append(make([]float32, nf), t.Data...)
		w.outB = []float32{0, b[0]}
		return nil
	}
	w.classes, w.outW, w.outB = c, t.Data, b
	return nil
}

// wideTable reads the wide path's table [vocabulary, outputs] when the
// layout names one. It has no bias (a key for one is refused as not part
// of the layout). With one sigmoid unit its single
// column becomes class 1's, class 0's weights being zero, as for the
// output layer.
func (w *weights) wideTable(l Layout, file string, get func(string, string) (*statedict.Tensor, error)) error {
	if l.Wide == "" {
		return nil
	}
	t, err := get(l.Wide, "wide word-weight table")
	if err != nil {
		return err
	}
	outs := w.classes
	if w.sigmoidOutput {
		outs = 1
	}
	if len(t.Shape) != 2 || t.Shape[0] != w.vocab || t.Shape[1] != outs {
		return layoutErr(file, l.Wide, t, "the wide word-weight table needs shape [%d, %d] (vocabulary × outputs of %s)", w.vocab, outs, l.Output)
	}
	if !w.sigmoidOutput {
		w.wide = t.Data
		return nil
	}
	w.wide = make([]float32, 2*w.vocab)
	for r, v := range t.Data {
		w.wide[2*r+1] = v
	}
	return nil
}
