//go:build !race

package testref

// Race reports whether the tests were built with the race detector (see
// race.go).
const Race = false
