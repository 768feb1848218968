package cnn

import "math"

// maxAverageEpochs is the longest horizon TrainConfig.WeightAverage takes
// (a million epochs): far beyond any run, and short enough that the decay
// per step stays below 1 in float64 for any split (at a decay of 1 the bias
// correction divides by zero and every averaged weight is NaN).
const maxAverageEpochs = 1e6

// weightAverage is the exponential moving average of a model's weights over
// the training steps: averaged iterates as in Polyak & Juditsky (1992,
// "Acceleration of Stochastic Approximation by Averaging", SIAM J. Control
// Optim.), in the exponential form, started at zero and divided by
// 1 − decayⁿ after n samples as Adam's moments are (Kingma & Ba 2015), so
// that the random start carries no weight. sum holds the running sums;
// model is the corrected average, formed when asked for.
type weightAverage struct {
	every   int     // steps between two samples
	decay   float64 // per sample: the per-step decay to the power every
	steps   int     // training steps seen
	samples int     // samples taken
	sum     *Model
	model   *Model
}

// newWeightAverage returns the average of m's weights over the steps to
// come, with a horizon of epochs epochs of stepsPerEpoch steps each: the
// decay per step is 1 − 1/(epochs·stepsPerEpoch) (0, the latest sample
// alone, when that is below 0), so the mean age of the averaged weights is
// about epochs epochs on a split of any size. A sample costs a pass over
// every weight, as much as a dense optimizer step, so it is taken every few
// steps, at the decay those steps have together: every stepsPerEpoch/8
// steps, but at least every 4th step and at most every step. The average
// holds the samples taken so far, so an epoch's model leaves out the steps
// after its last sample (fewer than 4). It returns nil when epochs is 0
// (off).
func newWeightAverage(m *Model, epochs float64, stepsPerEpoch int) *weightAverage {
	if epochs == 0 {
		return nil
	}
	perStep := max(0, 1-1/(epochs*float64(stepsPerEpoch)))
	every := min(4, max(1, stepsPerEpoch/8))
	a := &weightAverage{every: every, decay: math.Pow(perStep, float64(every)), sum: m.Clone()}
	for _, s := range trainableSlices(a.sum) {
		clear(s)
	}
	return a
}

// step records that one training step has changed m; every a.every steps
// it samples m's weights into the sums.
func (a *weightAverage) step(m *Model) {
	a.steps++
	if a.steps%a.every != 0 {
		return
	}
	a.samples++
	k := float32(1 - a.decay)
	dst, src := trainableSlices(a.sum), trainableSlices(m)
	for i, s := range dst {
		for j, x := range src[i] {
			s[j] += k * (x - s[j])
		}
	}
}

// current returns the bias-corrected average of the samples so far (m's
// own weights before the first sample), a model of m's shape that the
// next step's sample leaves alone until current is called again.
func (a *weightAverage) current(m *Model) *Model {
	a.model = copyWeights(a.model, m)
	if a.samples > 0 {
		inv := float32(1 / (1 - math.Pow(a.decay, float64(a.samples))))
		dst, src := trainableSlices(a.model), trainableSlices(a.sum)
		for i, s := range dst {
			for j, x := range src[i] {
				s[j] = x * inv
			}
		}
	}
	if a.model.Char != nil {
		a.model.FillChars() // the character parts follow the averaged layer
	}
	a.model.Invalidate()
	return a.model
}

// trainableSlices returns every trainable weight slice of m, in a fixed
// order: the embeddings, each convolution's weights and biases, the output
// layer, the word and bigram weights, and the character layer's.
func trainableSlices(m *Model) [][]float32 {
	out := [][]float32{m.Emb}
	for _, c := range m.Convs {
		out = append(out, c.W, c.B)
	}
	out = append(out, m.OutW, m.OutB, m.Wide, m.WideBigram)
	if l := m.Char; l != nil {
		out = append(out, l.Emb, l.W, l.B)
	}
	return out
}
