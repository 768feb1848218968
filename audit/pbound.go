package audit

import "encoding/json"

// PFloor is the smallest p-value the audit writes as a number in its
// words ("p < 1e-300" below it): an exact test's p-value far into the tail
// underflows to 0 in float64, and one near the floor has lost its
// relative accuracy.
const PFloor = 1e-300

// Below is PFloor when p is below it (p, 0 included, is then only known to
// be smaller), else 0: the bound that the JSON's p_below and adjusted_p_below
// and the cue table's columns of those names hold.
func Below(p float64) float64 {
	if p < PFloor {
		return PFloor
	}
	return 0
}

// MarshalJSON writes the association with, beside p and adjusted_p, the
// keys p_below and adjusted_p_below where that value is below PFloor
// (Below): JSON numbers cannot hold a p-value that underflowed to 0, so the
// bound says what the 0 means, as the audit's words do ("p < 1e-300").
func (a CueAssociation) MarshalJSON() ([]byte, error) {
	type plain CueAssociation
	return json.Marshal(struct {
		plain
		PBelow        float64 `json:"p_below,omitempty"`
		AdjustedBelow float64 `json:"adjusted_p_below,omitempty"`
	}{plain(a), Below(a.P), Below(a.Adjusted)})
}
