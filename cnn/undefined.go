package cnn

import (
	"encoding/json"
	"math"
)

// A figure with nothing to measure (a class's precision when no text was
// predicted as it, its recall and F1 when no text has it) is NaN in Go and
// null in JSON, as the README says of every figure telltale writes, and
// reads back from null as NaN. Its interval is undefined as a whole.

// UndefinedInterval is the interval of a figure with nothing to measure:
// NaN estimate and bounds, written "–" (String) and null in JSON.
func UndefinedInterval() Interval {
	return Interval{Estimate: math.NaN(), Low: math.NaN(), High: math.NaN()}
}

// Undefined reports whether the interval is of a figure with nothing to
// measure (its estimate is NaN).
func (iv Interval) Undefined() bool { return math.IsNaN(iv.Estimate) }

// classIntervalsJSON is ClassIntervals as JSON: an undefined interval
// null.
type classIntervalsJSON struct {
	Label     string    `json:"label"`
	Precision *Interval `json:"precision"`
	Recall    *Interval `json:"recall"`
	F1        *Interval `json:"f1"`
}

// MarshalJSON writes the undefined intervals as null. (Interval itself has
// no JSON method: CalibrationFigure embeds it, and would take it over.)
func (c ClassIntervals) MarshalJSON() ([]byte, error) {
	return json.Marshal(classIntervalsJSON{c.Label, intervalOrNull(c.Precision), intervalOrNull(c.Recall), intervalOrNull(c.F1)})
}

// UnmarshalJSON reads null intervals as UndefinedInterval.
func (c *ClassIntervals) UnmarshalJSON(b []byte) error {
	var q classIntervalsJSON
	if err := json.Unmarshal(b, &q); err != nil {
		return err
	}
	*c = ClassIntervals{Label: q.Label, Precision: intervalOrUndefined(q.Precision), Recall: intervalOrUndefined(q.Recall), F1: intervalOrUndefined(q.F1)}
	return nil
}

// intervalOrNull is &iv, or nil when iv is undefined.
func intervalOrNull(iv Interval) *Interval {
	if iv.Undefined() {
		return nil
	}
	return &iv
}

// intervalOrUndefined is *p, or UndefinedInterval when p is nil.
func intervalOrUndefined(p *Interval) Interval {
	if p == nil {
		return UndefinedInterval()
	}
	return *p
}

// classJSON is ClassMetrics as JSON: its undefined figures null.
type classJSON struct {
	Label     string   `json:"label"`
	Precision *float64 `json:"precision"`
	Recall    *float64 `json:"recall"`
	F1        *float64 `json:"f1"`
	Support   int      `json:"support"`
}

// MarshalJSON writes the undefined figures (NaN) as null.
func (c ClassMetrics) MarshalJSON() ([]byte, error) {
	return json.Marshal(classJSON{c.Label, orNull(c.Precision), orNull(c.Recall), orNull(c.F1), c.Support})
}

// UnmarshalJSON reads null figures as NaN (undefined).
func (c *ClassMetrics) UnmarshalJSON(b []byte) error {
	var q classJSON
	if err := json.Unmarshal(b, &q); err != nil {
		return err
	}
	*c = ClassMetrics{Label: q.Label, Precision: orNaN(q.Precision), Recall: orNaN(q.Recall), F1: orNaN(q.F1), Support: q.Support}
	return nil
}

// orNull is v, or nil when v is NaN or infinite.
func orNull(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// orNaN is *p, or NaN when p is nil (null in JSON).
func orNaN(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

// WithoutSupport lists the labels of m with no gold text: predicted, those
// predicted at least once (the macro-F1 counts them with F1 0, as
// scikit-learn does), and absent, those never predicted either (the
// macro-F1 leaves them out). Their recall and F1 are undefined.
func (m Metrics) WithoutSupport() (predicted, absent []string) {
	for c, pc := range m.PerClass {
		if pc.Support > 0 {
			continue
		}
		n := 0
		for g := range m.Confusion {
			n += m.Confusion[g][c]
		}
		if n > 0 {
			predicted = append(predicted, pc.Label)
		} else {
			absent = append(absent, pc.Label)
		}
	}
	return predicted, absent
}

// NeverPredicted lists the labels of m no text was predicted as (their
// precision is undefined).
func (m Metrics) NeverPredicted() []string {
	var out []string
	for c, pc := range m.PerClass {
		n := 0
		for g := range m.Confusion {
			n += m.Confusion[g][c]
		}
		if n == 0 {
			out = append(out, pc.Label)
		}
	}
	return out
}
