package cnn

import (
	"context"
	"math"
	"slices"
	"strings"
	"testing"
)

// The moving average of the weights is, after n samples, the mean of the
// sampled iterates weighted by b^(n−j) (b the decay per sample), each
// weight divided by their sum: the bias-corrected exponential average, an
// identity of the definition (Polyak & Juditsky 1992 in the exponential
// form; the correction as Adam's, Kingma & Ba 2015). A horizon of a
// quarter epoch of 40 steps is a decay of 1 − 1/10 per step, sampled every
// 4 steps (at least 8 samples an epoch), here over a real training run's
// iterates.
func TestWeightAverageIsTheWeightedMeanOfIterates(t *testing.T) {
	const horizon, stepsPerEpoch, perStep, every = 0.25, 40, 0.9, 4
	d := toyData(3, 60, 30)
	m := randModel(7, 30, 6, []int{2, 3}, 4, 2)
	m.Config.Dropout = 0.3
	tc, err := TrainConfig{Seed: 1, Threads: 2}.WithDefaults()
	if err != nil {
		t.Fatal(err)
	}
	tr := newTrainer(m, tc)
	defer tr.close()
	tr.prepare(d)
	avg := newWeightAverage(m, horizon, stepsPerEpoch)
	if avg.every != every {
		t.Fatalf("a sample every %d steps, want %d", avg.every, every)
	}
	if got, want := flatWeights(avg.current(m)), flatWeights(m); !slices.Equal(got, want) {
		t.Fatal("before any sample the average is not the model's own weights")
	}
	var samples [][]float32
	for s := 1; s <= 4*every+2; s++ {
		tr.step(d, []int{s % 60, (s + 7) % 60, (s + 19) % 60, (s + 31) % 60})
		avg.step(m)
		if s%every == 0 {
			samples = append(samples, flatWeights(m))
		}
	}
	b := math.Pow(perStep, every)
	got := flatWeights(avg.current(m))
	var moved bool
	for i := range got {
		var num, den float64
		for j, s := range samples {
			w := math.Pow(b, float64(len(samples)-1-j))
			num += w * float64(s[i])
			den += w
		}
		want := num / den
		if !close32(got[i], float32(want), 1e-5, 1e-6) {
			t.Fatalf("weight %d: average %g, weighted mean of the %d samples %g", i, got[i], len(samples), want)
		}
		moved = moved || !close32(got[i], flatWeights(m)[i], 1e-4, 0)
	}
	if !moved {
		t.Error("the average equals the latest weights: nothing was averaged")
	}
}

// With a dev split and WeightAverage, each epoch's dev metrics are those of
// the averaged model, and the kept model is the best of them; training
// goes on from the raw weights, so a run is deterministic for its seed.
func TestTrainWeightAverageDev(t *testing.T) {
	run := func() (*Model, *TrainResult) {
		m := randModel(5, 30, 6, []int{2}, 3, 2)
		train, dev := toyData(5, 120, 30), toyData(6, 60, 30)
		res, err := Train(context.Background(), m, train, dev,
			TrainConfig{Epochs: 4, Batch: 10, Seed: 1, Patience: -1, WeightAverage: 0.5}, nil)
		if err != nil {
			t.Fatal(err)
		}
		return m, res
	}
	m, res := run()
	checkKeptIsBest(t, m, toyData(6, 60, 30), res)
	again, _ := run()
	if !slices.Equal(flatWeights(m), flatWeights(again)) {
		t.Error("two runs with the same seed differ")
	}
	if m.Info.Recipe == nil || m.Info.Recipe.WeightAverage != 0.5 {
		t.Error("the model's recipe does not record the moving average")
	}
}

// The model Train keeps is the moving average, not the latest weights.
// Without a dev split the last epoch is kept. The raw weights follow the
// same path with and without the average (it only reads them), so the two
// runs' kept weights must differ, and the averaged run's, a mean over about
// the last two epochs, must lie nearer the previous epoch's end than the
// last weights do (summed over the weights).
func TestTrainKeepsTheWeightAverage(t *testing.T) {
	train := toyData(3, 120, 30)
	run := func(h float64) (*Model, [][]float32, []float32) {
		m := randModel(4, 30, 6, []int{2, 3}, 3, 2)
		var ends [][]float32
		var reported []float32 // Progress.Model of the last epoch
		_, err := Train(context.Background(), m, train, Data{},
			TrainConfig{Epochs: 4, Batch: 10, Seed: 2, Threads: 2, WeightAverage: h},
			func(p Progress) {
				if p.Phase == "epoch" {
					ends = append(ends, flatWeights(m)) // the raw weights here
					reported = flatWeights(p.Model)
				}
			})
		if err != nil {
			t.Fatal(err)
		}
		return m, ends, reported
	}
	raw, rawEnds, rawReported := run(0)
	avg, avgEnds, avgReported := run(2)
	// The epoch's model the progress reports is the one kept (no dev: the last).
	if !slices.Equal(rawReported, flatWeights(raw)) || !slices.Equal(avgReported, flatWeights(avg)) {
		t.Error("Progress.Model of the last epoch is not the model Train kept")
	}
	for e := range rawEnds {
		if !slices.Equal(rawEnds[e], avgEnds[e]) {
			t.Fatalf("epoch %d: the raw weights differ with the average on: it must only read them", e+1)
		}
	}
	got, last, prev := flatWeights(avg), flatWeights(raw), rawEnds[len(rawEnds)-2]
	if slices.Equal(got, last) || slices.Equal(got, prev) {
		t.Fatal("the kept weights are the last or the previous epoch's own: the average is not what Train keeps")
	}
	var toPrev, lastToPrev float64
	for i := range got {
		toPrev += math.Abs(float64(got[i] - prev[i]))
		lastToPrev += math.Abs(float64(last[i] - prev[i]))
	}
	if toPrev >= lastToPrev {
		t.Errorf("the kept weights are %.4g from the previous epoch's end, the last epoch's own %.4g: no pull back", toPrev, lastToPrev)
	}
}

func TestWeightAverageSettings(t *testing.T) {
	for _, c := range []struct {
		tc   TrainConfig
		want string
	}{
		{TrainConfig{WeightAverage: math.Inf(1)}, "moving average over"},
		{TrainConfig{WeightAverage: 1e18}, "at most"},
		{TrainConfig{WeightAverage: -0.5}, "moving average over"},
		{TrainConfig{WeightAverage: math.NaN()}, "moving average over"},
		{TrainConfig{WeightAverage: 0.99, AverageLast: 3}, "choose one"},
		{TrainConfig{WeightAverage: 0.99, WideFit: true, WideFitScale: true}, "learned scale"},
	} {
		if _, err := c.tc.WithDefaults(); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one with %q", c.tc, err, c.want)
		}
	}
	if _, err := (TrainConfig{WeightAverage: 3, AverageLast: 1}).WithDefaults(); err != nil {
		t.Errorf("valid settings refused: %v", err)
	}
}
