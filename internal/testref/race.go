//go:build race

package testref

// Race reports whether the tests were built with the race detector
// (go test -race, make test-race). The race pass checks the packages'
// concurrency; a test whose work is the same goroutines over a larger input
// may give the race build a smaller one, when the full build runs the full
// size with every check.
const Race = true
