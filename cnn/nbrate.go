package cnn

import (
	"math"

	"telltale/corpus"
)

// nbAlpha is the smoothing count α of the naive-Bayes log-count ratios
// (Wang & Manning 2012 use α = 1).
const nbAlpha = 1

// nbLogRatios returns the naive-Bayes log-count ratio of each of n table
// rows over a labelled split (Wang & Manning 2012, "Baselines and Bigrams:
// Simple, Good Sentiment and Topic Classification", ACL, section 2.1, the
// ratio r that NBSVM scales its features by): with binarized features (a
// row counts once per text however often it occurs), p the vector α +
// the counts of class c's texts and q the vector α + those of the other
// texts,
//
//	r_j = log((p_j / ‖p‖₁) / (q_j / ‖q‖₁)),
//
// one class against the rest. With more than two classes a row's value is
// the largest |r_j| over the classes; with two it is |r_j|, the same for
// either class. ‖·‖₁ runs over the table's n rows alone, so each table
// (word weights, bigram weights) has its own ratios. features(i, add) calls
// add with the row of every feature occurrence of text i (a row in
// [0, n)), labels[i] being its class in [0, classes).
func nbLogRatios(n, classes int, labels []int, features func(i int, add func(row int32))) []float64 {
	cnt := make([]float64, classes*n) // texts of class c with row j: cnt[c·n+j]
	tot := make([]float64, classes)   // Σ_j cnt[c·n+j]
	seen := make([]int, n)            // 1 + the last text that had row j
	for i, y := range labels {
		features(i, func(r int32) {
			if seen[r] == i+1 {
				return
			}
			seen[r] = i + 1
			cnt[y*n+int(r)]++
			tot[y]++
		})
	}
	all := make([]float64, n) // texts of any class with row j
	var sum float64
	for c := range classes {
		for j, v := range cnt[c*n : (c+1)*n] {
			all[j] += v
		}
		sum += tot[c]
	}
	r := make([]float64, n)
	for c := range classes {
		pNorm := float64(n)*nbAlpha + tot[c]
		qNorm := float64(n)*nbAlpha + sum - tot[c]
		for j := range r {
			p := nbAlpha + cnt[c*n+j]
			q := nbAlpha + all[j] - cnt[c*n+j]
			r[j] = max(r[j], math.Abs(math.Log(p/pNorm)-math.Log(q/qNorm)))
		}
	}
	return r
}

// nbRateFactors returns the per-row learning-rate factors of a table with
// ratios r (nbLogRatios) and exponent γ (TrainConfig.WideNBRate):
// |r_j|^γ divided by the mean of |r_k|^γ over the table's rows, so the
// table's mean rate stays that of the recipe. A table whose every ratio is
// 0 gets factor 1 throughout.
func nbRateFactors(r []float64, gamma float64) []float64 {
	f := make([]float64, len(r))
	var sum float64
	for j, v := range r {
		f[j] = math.Pow(math.Abs(v), gamma)
		sum += f[j]
	}
	mean := sum / float64(len(r))
	for j := range f {
		if mean > 0 {
			f[j] /= mean
		} else {
			f[j] = 1
		}
	}
	return f
}

// setNBRates gives the word and bigram weight tables' optimizer groups
// their per-row learning-rate factors from the training split d
// (TrainConfig.WideNBRate; nothing when it is 0). The word table's rows are
// the non-PAD ids, UNK's counted where the split's texts hold it; the
// bigram table's are the pairs prepare found in each text (tr.prep, before
// any dropout).
func (tr *trainer) setNBRates(d Data) {
	gamma := tr.tc.WideNBRate
	if gamma == 0 {
		return
	}
	cfg := tr.m.Config
	if g := tr.wideGroup; g >= 0 {
		r := nbLogRatios(cfg.VocabSize-1, cfg.Classes, d.Labels, func(i int, add func(int32)) {
			for _, id := range d.IDs[i] {
				if id != corpus.PAD {
					add(id - 1) // the group's rows start after PAD's
				}
			}
		})
		tr.groups[g].rowLR = nbRateFactors(r, gamma)
	}
	if g := tr.bigramGroup; g >= 0 && len(tr.m.Bigrams) > 0 {
		r := nbLogRatios(len(tr.m.Bigrams), cfg.Classes, d.Labels, func(i int, add func(int32)) {
			for _, row := range tr.prep.rows[i] {
				add(row)
			}
		})
		tr.groups[g].rowLR = nbRateFactors(r, gamma)
	}
}
