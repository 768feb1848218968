package cnn

import "fmt"

func ExampleReliability() {
	conf := []float64{0.95, 0.9, 0.6, 0.55, 0.3}
	correct := []bool{true, true, false, true, false}
	for _, b := range Reliability(conf, correct, 5) {
		if b.Count > 0 {
			fmt.Printf("(%.1f, %.1f]: %d texts, confidence %.3f, accuracy %.2f\n", b.Lo, b.Hi, b.Count, b.Conf, b.Acc)
		}
	}
	// Output:
	// (0.2, 0.4]: 1 texts, confidence 0.300, accuracy 0.00
	// (0.4, 0.6]: 2 texts, confidence 0.575, accuracy 0.50
	// (0.8, 1.0]: 2 texts, confidence 0.925, accuracy 1.00
}
