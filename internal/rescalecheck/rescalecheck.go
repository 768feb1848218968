package rescalecheck

import "testing"

// Same reports on t each shown text that differs between the model
// (shown[0]) and its copy with the filters of ks rescaled (shown[1]), and
// fails t when fewer than len(ks) of the raw values behind them (raw[0]
// against raw[1]) moved: then the check would check little.
// Preconditions: shown[0] and shown[1] have the same length, as do raw[0]
// and raw[1].
func Same(t testing.TB, ks map[int]float32, shown [2][]string, raw [2][]float64) {
	t.Helper()
	for j := range shown[0] {
		if shown[0][j] != shown[1][j] {
			t.Errorf("filters rescaled by %v: shown\n%s\nbecomes\n%s", ks, shown[0][j], shown[1][j])
		}
	}
	moved := 0
	for g := range raw[0] {
		if raw[0][g] != raw[1][g] {
			moved++
		}
	}
	if moved < len(ks) {
		t.Fatalf("only %d raw values moved under the rescaling: the check checks little", moved)
	}
}
