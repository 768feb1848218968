package cnn

import (
	"fmt"
	"slices"
)

// Merge returns the one model whose logits are the mean of the logits of
// ms: a Kim CNN like each of them, whose embedding of a word is the members'
// embeddings side by side, whose filters are the members' filters (filter f
// of member i is nonzero only on member i's block of the embedding), and
// whose output weights are the members' divided by len(ms). The members must
// share the vocabulary, the labels, the filter widths and the number of
// maps per width; their dimensions may differ. Averaging the logits of
// independently trained networks is the ensemble of Hansen & Salamon (1990,
// "Neural Network Ensembles", IEEE TPAMI); written this way it is still one
// model, so everything that reads a model reads it.
//
// The merged model takes the first member's tokenizer, dropout, max-norm,
// baseline and record (Info), with Info.Notes["merged"] saying how many
// members it holds; no filter is masked.
func Merge(ms []*Model) (*Model, error) {
	if len(ms) == 0 {
		return nil, fmt.Errorf("cnn: no models to merge")
	}
	first := ms[0]
	cfg := first.Config
	cfg.Widths = slices.Clone(cfg.Widths)
	cfg.Dim, cfg.Filters = 0, 0
	for i, m := range ms {
		if err := m.checkShapes(); err != nil {
			return nil, fmt.Errorf("cnn: model %d: %w", i, err)
		}
		c := m.Config
		switch {
		case !slices.Equal(c.Widths, first.Config.Widths) || c.Classes != first.Config.Classes ||
			c.VocabSize != first.Config.VocabSize:
			return nil, fmt.Errorf("cnn: model %d has other widths, classes or vocabulary size than model 0", i)
		case !slices.Equal(m.Vocab, first.Vocab) || !slices.Equal(m.Labels, first.Labels):
			return nil, fmt.Errorf("cnn: model %d has another vocabulary or other labels than model 0", i)
		case c.Wide:
			return nil, fmt.Errorf("cnn: model %d has a wide word-weight path: models with one cannot be merged yet, train one", i)
		case c.Chars != nil:
			return nil, fmt.Errorf("cnn: model %d has a character layer: models with character layers cannot be merged, train one", i)
		case m.Masked != nil && slices.Contains(m.Masked, true):
			return nil, fmt.Errorf("cnn: model %d has masked filters: merge unmasked models", i)
		}
		cfg.Dim += c.Dim
		cfg.Filters += c.Filters
	}
	out, err := New(cfg, first.Vocab, first.Labels, 0)
	if err != nil {
		return nil, err
	}
	clear(out.Emb)
	for b := range out.Convs {
		clear(out.Convs[b].W)
		clear(out.Convs[b].B)
	}
	clear(out.OutB)
	nf, k := cfg.NumFilters(), float32(len(ms))
	dOff, fOff := 0, 0 // the member's first embedding column and first map of each width
	for _, m := range ms {
		d, F := m.Config.Dim, m.Config.Filters
		for v := range cfg.VocabSize {
			copy(out.Emb[v*cfg.Dim+dOff:v*cfg.Dim+dOff+d], m.Emb[v*d:(v+1)*d])
		}
		for b, c := range m.Convs {
			w, dst := c.Width, &out.Convs[b]
			for f := range F {
				for s := range w {
					copy(dst.W[((fOff+f)*w+s)*cfg.Dim+dOff:], c.W[(f*w+s)*d:(f*w+s+1)*d])
				}
				dst.B[fOff+f] = c.B[f]
				for cl := range cfg.Classes {
					out.OutW[cl*nf+b*cfg.Filters+fOff+f] = m.OutW[cl*m.Config.NumFilters()+b*F+f] / k
				}
			}
		}
		for cl := range cfg.Classes {
			out.OutB[cl] += m.OutB[cl] / k
		}
		dOff += d
		fOff += F
	}
	out.Tokenizer = first.Tokenizer
	out.Baseline = first.Baseline
	out.Info = first.Info
	out.Info.Notes = make(map[string]string, len(first.Info.Notes)+1)
	for key, v := range first.Info.Notes {
		out.Info.Notes[key] = v
	}
	out.Info.Notes["merged"] = fmt.Sprint(len(ms))
	out.Invalidate()
	return out, nil
}
