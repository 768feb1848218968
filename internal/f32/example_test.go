package f32_test

import (
	"fmt"

	"telltale/internal/f32"
)

// Small integers are exact in float32, so every implementation gives the
// same sums here whatever its summation order.
func ExampleMatMulNT() {
	a := []float32{1, 2, 3, 4, 5, 6}          // 2×3
	b := []float32{1, 0, 1, 0, 1, 0, 2, 2, 2} // 3×3
	c := make([]float32, 2*3)
	f32.MatMulNT(c, a, b, 2, 3, 3)
	fmt.Println(c, f32.Dot(a[:3], b[6:]))
	// Output: [4 2 12 10 5 30] 12
}
