package main

import (
	"testing"

	"telltale/cnn"
)

// sameSplits: two records of the same data match when they hold out the
// same shares with the same seed, or the same files whatever the seed (a
// seed draws nothing then); another seed with a share held out, another
// file or other data do not match.
func TestSameSplits(t *testing.T) {
	files := cnn.SplitRecord{Fingerprint: "f", DevFile: "/d.csv", TestFile: "/t.csv", Seed: 1}
	drawn := cnn.SplitRecord{Fingerprint: "f", DevFrac: 0.1, TestFrac: 0.1, Seed: 1}
	with := func(r cnn.SplitRecord, change func(*cnn.SplitRecord)) *cnn.SplitRecord { change(&r); return &r }
	for _, c := range []struct {
		name string
		a, b *cnn.SplitRecord
		want bool
	}{
		{"files, same seed", &files, with(files, func(*cnn.SplitRecord) {}), true},
		{"files, another seed", &files, with(files, func(r *cnn.SplitRecord) { r.Seed = 2 }), true},
		{"shares, same seed", &drawn, with(drawn, func(*cnn.SplitRecord) {}), true},
		{"shares, another seed", &drawn, with(drawn, func(r *cnn.SplitRecord) { r.Seed = 2 }), false},
		{"dev file and a test share, another seed", with(files, func(r *cnn.SplitRecord) { r.TestFile, r.TestFrac = "", 0.1 }),
			with(files, func(r *cnn.SplitRecord) { r.TestFile, r.TestFrac, r.Seed = "", 0.1, 2 }), false},
		{"another test file", &files, with(files, func(r *cnn.SplitRecord) { r.TestFile = "/u.csv" }), false},
		{"other data", &files, with(files, func(r *cnn.SplitRecord) { r.Fingerprint = "g" }), false},
		{"one without a record", &files, nil, false},
		{"pipes: other paths, the same examples", with(files, func(r *cnn.SplitRecord) { r.DevFingerprint, r.TestFingerprint = "d", "t" }),
			with(files, func(r *cnn.SplitRecord) {
				r.DevFile, r.TestFile, r.DevFingerprint, r.TestFingerprint = "/dev/fd/63", "/dev/fd/62", "d", "t"
			}), true},
		{"pipes: the same path, other examples", with(files, func(r *cnn.SplitRecord) { r.DevFingerprint, r.TestFingerprint = "d", "t" }),
			with(files, func(r *cnn.SplitRecord) { r.DevFingerprint, r.TestFingerprint = "d", "u" }), false},
	} {
		if got := sameSplits(c.a, c.b); got != c.want {
			t.Errorf("%s: %v, want %v", c.name, got, c.want)
		}
	}
}
