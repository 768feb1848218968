package cnn

import "slices"

// What the choosing half of an audit chose for a model (CueChoice.For).
const (
	ChoseRetrain = "retrain"
	ChoseMask    = "mask"
)

// CueChoice is the half of a set of held-out texts on which an audit
// chose the cues a model was retrained without, or the mask written into
// it (audit.Result.Selection): texts that took part in a choice about the
// model, so that its figures on them are not held-out figures. The other
// half (the confirming half) took no part.
type CueChoice struct {
	// Half is "selection", the audit's choosing half.
	Half string `json:"half"`
	// For is what the half chose: ChoseRetrain (the cues the model was
	// retrained without) or ChoseMask (its filter and word mask).
	For string `json:"for"`
	// Heldout is "test" when the audit's held-out texts were the audited
	// model's test split (the one the retrained model records), else the
	// absolute path of the file they were read from: audit --test FILE, or
	// --data when the audit held out all of it (data not the model's), or,
	// in the window, the open corpus's test file or data file.
	Heldout string `json:"heldout"`
	// Of and Fingerprint identify those held-out texts as the audit read
	// them (corpus.Dataset.Fingerprint), so that a later command knows
	// them again under any name.
	Of          int    `json:"of"`
	Fingerprint string `json:"fingerprint"`
	// Seed is the audit's --seed, which drew the halves; Texts are the
	// indexes of the half's texts among the held-out texts, ascending.
	Seed  uint64 `json:"seed"`
	Texts []int  `json:"texts"`
	// OtherSeeds are the --seed values, other than Seed and ascending, of
	// later audits whose choosing halves were joined into Texts (ChoseCues):
	// when there are any, every confirming half holds texts that chose
	// (ConfirmingSeed).
	OtherSeeds []uint64 `json:"other_seeds,omitempty"`
}

// seeds are the --seed values of the audits whose choosing halves c
// joins: Seed, then OtherSeeds.
func (c CueChoice) seeds() []uint64 { return append([]uint64{c.Seed}, c.OtherSeeds...) }

// ConfirmingSeed is the --seed whose confirming half of a set of held-out
// texts took part in none of choices (the records CuesChosenIn gives for
// those texts): ok is true when every choice was made on the choosing half
// of that one seed, which draws the same two halves of the same texts each
// time. When audits with different seeds chose on them, the halves they
// drew overlap, every confirming half holds texts that chose, and ok is
// false: only a new test file gives held-out figures. seeds are then the
// seeds that chose, ascending; with no choice, ok is false and seeds nil.
func ConfirmingSeed(choices []CueChoice) (seed uint64, seeds []uint64, ok bool) {
	for _, c := range choices {
		seeds = append(seeds, c.seeds()...)
	}
	slices.Sort(seeds)
	seeds = slices.Compact(seeds)
	if len(seeds) != 1 {
		return 0, seeds, false
	}
	return seeds[0], seeds, true
}

// ChoseCues records that an audit of the model chose cues on choice's half
// of its held-out texts (Info.CuesChosenOn): merged into the record of the
// same held-out texts and the same choice (the same Of, Fingerprint and
// For: the indexes of both halves, and choice's seed among OtherSeeds when
// it is not the record's), else added. The other records are kept, and the
// slice is not shared with a copy's.
func (info *Info) ChoseCues(choice CueChoice) {
	out := slices.Clone(info.CuesChosenOn)
	for i, c := range out {
		if c.Of == choice.Of && c.Fingerprint == choice.Fingerprint && c.For == choice.For {
			texts := append(slices.Clone(c.Texts), choice.Texts...)
			slices.Sort(texts)
			out[i].Texts = slices.Compact(texts)
			out[i].OtherSeeds = otherSeeds(c, choice)
			info.CuesChosenOn = out
			return
		}
	}
	choice.Texts = slices.Sorted(slices.Values(choice.Texts))
	info.CuesChosenOn = append(out, choice)
}

// CuesChosenIn are the records of the choices made on the held-out texts
// n texts of fingerprint fp (corpus.Dataset.Fingerprint): none when no
// audit of the model's lineage chose anything on them.
func (info *Info) CuesChosenIn(n int, fp string) []CueChoice {
	if info == nil {
		return nil
	}
	var out []CueChoice
	for _, c := range info.CuesChosenOn {
		if c.Of == n && c.Fingerprint == fp {
			out = append(out, c)
		}
	}
	return out
}

// otherSeeds are the OtherSeeds of rec with choice's seeds joined to it:
// those not rec.Seed, ascending and distinct; nil when there are none.
func otherSeeds(rec, choice CueChoice) []uint64 {
	var out []uint64
	for _, s := range append(slices.Clone(rec.OtherSeeds), choice.seeds()...) {
		if s != rec.Seed {
			out = append(out, s)
		}
	}
	slices.Sort(out)
	return slices.Compact(out)
}
