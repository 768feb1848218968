// Package audit finds the cues a trained sentence CNN (package cnn) relies
// on that look like how its data was collected rather than the language of
// its task, and tells what the model scores without them.
package audit
