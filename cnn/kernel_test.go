package cnn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"unsafe"

	"telltale/internal/kerneltest"
)

// The shared kernel-test helpers (internal/kerneltest).
var (
	kernelSizes = kerneltest.Sizes
	randSlice   = kerneltest.RandSlice
	withGuard   = kerneltest.WithGuard
	checkGuard  = kerneltest.CheckGuard
)

const kernelTol = kerneltest.Tol

// The kernel tests run every implementation this build can use (the portable
// one always; AVX2 and AVX-512 ones when built with GOEXPERIMENT=simd on a CPU
// that has them) against float64 references computed here, on random inputs
// and odd sizes. Run them in both builds:
//
//	go test ./cnn -run Kernel
//	GOEXPERIMENT=simd go test ./cnn -run Kernel

func TestKernelSets(t *testing.T) {
	sets := kernelSets()
	if len(sets) == 0 || sets[0].name != "go" {
		t.Fatalf("kernelSets()[0] must be the portable set, got %v", sets)
	}
	found := false
	for _, s := range sets {
		if s.name == kernelLevel {
			found = true
		}
	}
	if !found {
		t.Fatalf("dispatch level %q is not among the tested sets", kernelLevel)
	}
	t.Logf("dispatch uses %q; testing %d implementation(s)", kernelLevel, len(sets))
}

// kernelLengths are the vector lengths of the elementwise kernels: every
// length up to 70 (all tails of 8- and 16-lane loops) and the model's sizes.
func kernelLengths() []int {
	var l []int
	for n := 0; n <= 70; n++ {
		l = append(l, n)
	}
	return append(l, 100, 128, 129, 300, 1000, 1201)
}

func TestKernelAxpyAddTo(t *testing.T) {
	r := rand.New(rand.NewPCG(2, 2))
	for _, ks := range kernelSets() {
		t.Run(ks.name, func(t *testing.T) {
			for _, n := range kernelLengths() {
				x := randSlice(r, n)
				y0 := randSlice(r, n)
				alpha := float32(r.NormFloat64())

				y, guard := withGuard(n, 7)
				copy(y, y0)
				ks.axpy(alpha, x, y)
				checkGuard(t, guard, 7, fmt.Sprintf("axpy n=%d", n))
				for i := range y {
					want := float64(y0[i]) + float64(alpha)*float64(x[i])
					scale := math.Abs(float64(y0[i])) + math.Abs(float64(alpha)*float64(x[i]))
					if !(math.Abs(float64(y[i])-want) <= kernelTol*scale) {
						t.Fatalf("axpy n=%d: y[%d] = %g, want %g", n, i, y[i], want)
					}
				}

				copy(y, y0)
				ks.addTo(y, x)
				checkGuard(t, guard, 7, fmt.Sprintf("addTo n=%d", n))
				for i := range y {
					// One float32 addition is correctly rounded: exact match.
					if want := y0[i] + x[i]; y[i] != want {
						t.Fatalf("addTo n=%d: dst[%d] = %g, want %g", n, i, y[i], want)
					}
				}
			}
		})
	}
}

func TestKernelMaxUpdate(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 3))
	for _, ks := range kernelSets() {
		t.Run(ks.name, func(t *testing.T) {
			for _, n := range kernelLengths() {
				best, bguard := withGuard(n, float32(math.Inf(-1)))
				full := make([]int32, n+8)
				for i := range full {
					full[i] = -1
				}
				arg, aguard := full[:n], full[n:]
				wantBest := make([]float32, n)
				wantArg := make([]int32, n)
				for i := range wantBest {
					wantBest[i], wantArg[i] = float32(math.Inf(-1)), -1
				}
				// Few distinct values, so ties are frequent and the
				// first-maximum rule is exercised; one NaN never wins.
				for step := int32(0); step < 12; step++ {
					x := make([]float32, n)
					for i := range x {
						x[i] = float32(r.IntN(5) - 2)
						if r.IntN(50) == 0 {
							x[i] = float32(math.NaN())
						}
					}
					ks.maxUpdate(best, arg, x, step)
					for i, v := range x {
						if float64(v) > float64(wantBest[i]) {
							wantBest[i], wantArg[i] = v, step
						}
					}
					for i := range best {
						if best[i] != wantBest[i] || arg[i] != wantArg[i] {
							t.Fatalf("n=%d step %d: [%d] = (%g, %d), want (%g, %d)", n, step, i, best[i], arg[i], wantBest[i], wantArg[i])
						}
					}
				}
				checkGuard(t, bguard, float32(math.Inf(-1)), fmt.Sprintf("maxUpdate best n=%d", n))
				for i, v := range aguard {
					if v != -1 {
						t.Fatalf("maxUpdate n=%d: wrote arg past the end at %d", n, i)
					}
				}
			}
		})
	}
}

// adamRef is Adam in float64 (Kingma & Ba 2015, Algorithm 1, in the
// arrangement of PyTorch's torch.optim.Adam), given the same (float32)
// hyperparameters and bias corrections the kernel receives.
// It also keeps ma, the same average of |g|, the scale of m's rounding error.
func adamRef(p, g, m, v, ma []float64, lr, b1, b2, eps, bc1, bc2 float32) {
	for i := range p {
		ma[i] = float64(b1)*ma[i] + (1-float64(b1))*math.Abs(g[i])
		m[i] = float64(b1)*m[i] + (1-float64(b1))*g[i]
		v[i] = float64(b2)*v[i] + (1-float64(b2))*g[i]*g[i]
		p[i] -= float64(lr) / float64(bc1) * m[i] / (math.Sqrt(v[i])/math.Sqrt(float64(bc2)) + float64(eps))
	}
}

func TestKernelAdamStepRandom(t *testing.T) {
	r := rand.New(rand.NewPCG(4, 4))
	const lr, b1, b2, eps float32 = 1e-3, 0.9, 0.999, 1e-8
	for _, ks := range kernelSets() {
		t.Run(ks.name, func(t *testing.T) {
			for _, n := range kernelLengths() {
				p := randSlice(r, n)
				m := make([]float32, n)
				v := make([]float32, n)
				p64 := make([]float64, n)
				m64 := make([]float64, n)
				v64 := make([]float64, n)
				ma := make([]float64, n)
				for i := range p {
					p64[i] = float64(p[i])
				}
				for step := 1; step <= 5; step++ {
					g := randSlice(r, n)
					g64 := make([]float64, n)
					for i := range g {
						g64[i] = float64(g[i])
					}
					bc1 := float32(1 - math.Pow(float64(b1), float64(step)))
					bc2 := float32(1 - math.Pow(float64(b2), float64(step)))
					ks.adamStep(p, g, m, v, lr, b1, b2, eps, bc1, bc2)
					adamRef(p64, g64, m64, v64, ma, lr, b1, b2, eps, bc1, bc2)
				}
				for i := range p {
					// The update is lr-sized; compare the parameter to
					// within float32 rounding of its own size plus a
					// small fraction of the total movement.
					tol := 2e-7*math.Abs(p64[i]) + 1e-5*5*float64(lr)
					if math.Abs(float64(p[i])-p64[i]) > tol {
						t.Fatalf("n=%d: p[%d] = %.9g, want %.9g", n, i, p[i], p64[i])
					}
					if math.Abs(float64(m[i])-m64[i]) > kernelTol*ma[i] {
						t.Fatalf("n=%d: m[%d] = %.9g, want %.9g", n, i, m[i], m64[i])
					}
					if math.Abs(float64(v[i])-v64[i]) > kernelTol*v64[i] {
						t.Fatalf("n=%d: v[%d] = %.9g, want %.9g", n, i, v[i], v64[i])
					}
				}
			}
		})
	}
}

// TestKernelAdamStepPyTorch checks three Adam steps against values produced
// by PyTorch 1.13.1 (Debian python3-torch), torch.optim.Adam([p], lr=0.01,
// betas=(0.9, 0.999), eps=1e-8) in float32, with the gradients below set on
// p.grad before each opt.step(); the expected values are the printed p,
// state['exp_avg'] and state['exp_avg_sq'] after the third step.
//
// PyTorch forms 1−β₂ in float64 from the decimal 0.999 before rounding it to
// float32 (0.001), while adamStep receives β₂ already rounded to float32 and
// forms 1−β₂ from that (0.00099998713): a relative difference of 1.29e-5 in
// every term of v, so v is compared to 2e-5 relative. The parameters and m
// are compared to 1e-6.
func TestKernelAdamStepPyTorch(t *testing.T) {
	p0 := []float32{0.5, -1.25, 2.0, 0.0, 3.5, -0.75, 1e-3}
	grads := [][]float32{
		{0.1, -0.2, 0.3, 0.0, -1.5, 2.0, 1e-4},
		{0.05, 0.4, -0.3, 0.2, -1.0, -2.0, 1e-4},
		{-0.3, 0.1, 0.0, -0.2, 0.5, 1.0, -1e-4},
	}
	wantP := []float64{0.4841504395008087, -1.2478175163269043, 1.9909331798553467, -0.006989544723182917, 3.5252225399017334, -0.7612209320068359, -0.021617665886878967}
	wantM := []float64{-0.017400002107024193, 0.02979999966919422, -0.0027000007685273886, -0.0019999993965029716, -0.1615000069141388, 0.0819999948143959, 7.099999493220821e-06}
	wantV := []float64{0.00010247751924907789, 0.00020976005180273205, 0.00017973010835703462, 7.996000204002485e-05, 0.00349450227804482, 0.008988004177808762, 2.997000911331149e-11}
	for _, ks := range kernelSets() {
		t.Run(ks.name, func(t *testing.T) {
			// Repeat the 7 values so SIMD versions run full vectors and a
			// tail: 7·5 = 35 = 2·16 + 3.
			const rep = 5
			n := len(p0) * rep
			p, m, v := make([]float32, n), make([]float32, n), make([]float32, n)
			for i := range p {
				p[i] = p0[i%len(p0)]
			}
			for step, g1 := range grads {
				g := make([]float32, n)
				for i := range g {
					g[i] = g1[i%len(g1)]
				}
				bc1 := float32(1 - math.Pow(0.9, float64(step+1)))
				bc2 := float32(1 - math.Pow(0.999, float64(step+1)))
				ks.adamStep(p, g, m, v, 0.01, 0.9, 0.999, 1e-8, bc1, bc2)
			}
			for i := range p {
				j := i % len(p0)
				if d := math.Abs(float64(p[i]) - wantP[j]); d > 1e-6*math.Max(1, math.Abs(wantP[j])) {
					t.Errorf("p[%d] = %.9g, PyTorch %.9g", i, p[i], wantP[j])
				}
				if d := math.Abs(float64(m[i]) - wantM[j]); d > 1e-6*math.Abs(wantM[j])+1e-12 {
					t.Errorf("m[%d] = %.9g, PyTorch %.9g", i, m[i], wantM[j])
				}
				if d := math.Abs(float64(v[i]) - wantV[j]); d > 2e-5*math.Abs(wantV[j])+1e-15 {
					t.Errorf("v[%d] = %.9g, PyTorch %.9g", i, v[i], wantV[j])
				}
			}
		})
	}
}

func TestKernelNoAllocs(t *testing.T) {
	r := rand.New(rand.NewPCG(6, 6))
	x, y := randSlice(r, 1000), randSlice(r, 1000)
	g, mo, v := randSlice(r, 1000), make([]float32, 1000), make([]float32, 1000)
	arg := make([]int32, 1000)
	for _, ks := range kernelSets() {
		allocs := map[string]float64{
			"axpy":      testing.AllocsPerRun(20, func() { ks.axpy(0.5, x, y) }),
			"addTo":     testing.AllocsPerRun(20, func() { ks.addTo(y, x) }),
			"maxUpdate": testing.AllocsPerRun(20, func() { ks.maxUpdate(y, arg, x, 3) }),
			"adamStep":  testing.AllocsPerRun(20, func() { ks.adamStep(y, g, mo, v, 1e-3, 0.9, 0.999, 1e-8, 0.1, 0.001) }),
		}
		for name, a := range allocs {
			if a != 0 {
				t.Errorf("%s %s: %v allocations per call, want 0", ks.name, name, a)
			}
		}
	}
}

// windowMax of every implementation must give the running maximum of the
// window sums, summed in slot order, with the first maximum kept on ties;
// the SIMD versions must agree with the portable one bit for bit.
func TestKernelWindowMax(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 8))
	// 33, 40, 48 and 100 end in a pass of three vectors in the AVX-512
	// version; 49 and 64 in one of four.
	for _, nf := range []int{1, 5, 16, 17, 33, 40, 48, 49, 64, 100} {
		for _, w := range []int{1, 3, 5} {
			const words, lp = 7, 23
			nr := 2*w*nf + 3 // two banks' worth of columns and an odd remainder
			col := nr - w*nf - 1
			tab := make([]float32, words*nr+winLanes)
			for i := range tab[:words*nr] {
				// Few distinct values, so that ties between windows occur.
				tab[i] = float32(rng.IntN(5)-2) * 0.25
			}
			rows := make([]*float32, lp)
			for p := range rows {
				rows[p] = &tab[rng.IntN(words)*nr]
			}
			np := padLanes(nf)
			bias := make([]float32, np)
			for i := range bias[:nf] {
				bias[i] = float32(rng.NormFloat64())
			}
			t0, t1 := 2, lp-w+1
			var ref []float32
			var refArg []int32
			for _, ks := range kernelSets() {
				best := make([]float32, np)
				arg := make([]int32, np)
				for i := range best {
					best[i] = float32(math.Inf(-1))
				}
				best[0], arg[0] = 1e9, -7 // an earlier maximum that must survive
				ks.windowMax(rows, w, nf, col, bias, best, arg, t0, t1)
				if ref == nil {
					// Check the portable version against a direct computation.
					for f := 0; f < nf; f++ {
						wantB, wantA := float32(math.Inf(-1)), int32(0)
						if f == 0 {
							wantB, wantA = 1e9, -7
						}
						for tt := t0; tt < t1; tt++ {
							a := bias[f]
							for s := 0; s < w; s++ {
								a += unsafe.Slice(rows[tt+s], nr)[col+s*nf+f]
							}
							if a > wantB {
								wantB, wantA = a, int32(tt)
							}
						}
						if best[f] != wantB || arg[f] != wantA {
							t.Fatalf("%s nf=%d w=%d filter %d: max %g at %d, want %g at %d", ks.name, nf, w, f, best[f], arg[f], wantB, wantA)
						}
					}
					ref, refArg = best[:nf], arg[:nf]
					continue
				}
				for f := 0; f < nf; f++ {
					if math.Float32bits(best[f]) != math.Float32bits(ref[f]) || arg[f] != refArg[f] {
						t.Fatalf("%s nf=%d w=%d filter %d: %g at %d, portable %g at %d", ks.name, nf, w, f, best[f], arg[f], ref[f], refArg[f])
					}
				}
			}
		}
	}
}
