package cnn

import "math"

// selector is Train's choice of the model to keep: at the end of each epoch
// it forms the epoch's model (the current weights, their moving average
// over the steps, or the mean of the last AverageLast epochs' weights),
// scores it on the dev split and keeps a copy of the best.
type selector struct {
	tc  TrainConfig
	dev Data

	ring []*Model // the weights at the ends of the last AverageLast epochs
	next int      // ring slot of the next epoch
	avg  *Model   // their mean

	avgSteps *weightAverage // the weights' moving average (WeightAverage); nil when off

	cand      *Model // the model of the epoch that ended last
	best      *Model
	bestScore float64 // higher is better
	bestLoss  float64 // the kept epoch's dev loss (StopMacroF1Loss's tie-break)
}

// newSelector returns the selector of a run; avg is the weights' moving
// average the run keeps (TrainConfig.WeightAverage), nil when off.
func newSelector(tc TrainConfig, dev Data, avg *weightAverage) *selector {
	return &selector{tc: tc, dev: dev, avgSteps: avg, bestScore: math.Inf(-1), bestLoss: math.Inf(1)}
}

// restart forgets the best score so far, so that the next epochEnd keeps
// its epoch and the choice goes on from there (TrainConfig.KeepFrom).
func (s *selector) restart() {
	s.bestScore, s.bestLoss = math.Inf(-1), math.Inf(1)
}

// epochEnd forms the model of the epoch that just ended on m, returns its
// dev metrics (nil without a dev split) and whether it is the best so far
// (always, without a dev split); the best is kept in s.best.
func (s *selector) epochEnd(m *Model) (*Metrics, bool, error) {
	cand := m
	if s.avgSteps != nil {
		cand = s.avgSteps.current(m)
	}
	if k := s.tc.AverageLast; k >= 2 {
		if len(s.ring) < k {
			s.ring = append(s.ring, nil)
		}
		s.ring[s.next] = copyWeights(s.ring[s.next], m)
		s.next = (s.next + 1) % k
		s.avg = meanWeights(s.avg, s.ring)
		cand = s.avg
	}
	s.cand = cand
	if s.dev.Len() == 0 {
		s.best = copyWeights(s.best, cand)
		return nil, true, nil
	}
	mt, loss, err := devScore(cand, s.dev, s.tc.Threads)
	if err != nil {
		return nil, false, err
	}
	score := mt.MacroF1
	if s.tc.StopOn == StopLoss {
		score = -loss
	}
	better := score > s.bestScore
	if s.tc.StopOn == StopMacroF1Loss && score == s.bestScore {
		better = loss < s.bestLoss
	}
	if !better {
		return &mt, false, nil
	}
	s.bestScore, s.bestLoss = score, loss
	s.best = copyWeights(s.best, cand)
	return &mt, true, nil
}

// devScore evaluates m on d: the metrics and the mean cross-entropy.
func devScore(m *Model, d Data, threads int) (Metrics, float64, error) {
	if err := d.check(m.Config, "dev"); err != nil {
		return Metrics{}, 0, err
	}
	probs := m.probabilities(d.IDs, threads, false)
	pred := make([]int, len(probs))
	conf := make([]float64, len(probs))
	var loss float64
	for i, p := range probs {
		pred[i], conf[i] = argmax(p)
		// A probability that rounds to 0 in float32 counts as the
		// smallest normal float32, so the mean stays finite.
		loss -= math.Log(max(float64(p[d.Labels[i]]), 0x1p-126))
	}
	return ComputeMetrics(m.Labels, d.Labels, pred, conf, DefaultBins), loss / float64(len(probs)), nil
}

// meanWeights sets the trainable weights of dst (allocated from srcs[0]
// when nil) to the element-wise mean of those of srcs, all of one shape,
// and returns dst.
func meanWeights(dst *Model, srcs []*Model) *Model {
	if dst == nil {
		dst = srcs[0].Clone()
	}
	inv := 1 / float32(len(srcs))
	out := trainableSlices(dst)
	for i, o := range out {
		clear(o)
		for _, s := range srcs {
			addTo(o, trainableSlices(s)[i])
		}
		for j := range o {
			o[j] *= inv
		}
	}
	if dst.Char != nil {
		// The mean of character parts is not the character part of the
		// mean layer (tanh, max): recompute it.
		dst.FillChars()
	}
	dst.Invalidate()
	return dst
}
