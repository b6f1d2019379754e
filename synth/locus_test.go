package synth

import (
	"math"
	"math/cmplx"
	"testing"

	"locusmith/airframe"
	"locusmith/internal/lti"
	"locusmith/internal/pyref"
)

// locusMatch returns the largest distance, relative to max(1, |want|),
// between the roots got and want paired by the minimum-distance
// assignment.
func locusMatch(got, want []complex128) float64 {
	if len(got) != len(want) {
		return math.Inf(1)
	}
	n := len(got)
	cost := make([]float64, n*n)
	for i, w := range want {
		for j, g := range got {
			cost[i*n+j] = cmplx.Abs(g - w)
		}
	}
	worst := 0.0
	for i, j := range assign(n, cost) {
		worst = math.Max(worst, cost[i*n+j]/math.Max(1, cmplx.Abs(want[i])))
	}
	return worst
}

// The locus at k = 1 is the designed closed loop: its roots are the
// closed-loop poles that Verify reports (the same characteristic
// polynomial, with the delay by the same Padé approximant), to 1e-6
// relative as the issue asks; both are root solvers of a well-separated
// polynomial, so the agreement is in fact much closer. The locus has one
// branch per open-loop pole of the rational (Padé) loop: the controller's,
// the plant's, the sensor's and PadeOrder for the delay.
func TestLocusPassesThroughDesignPoles(t *testing.T) {
	for _, f := range airframe.Forms() {
		for _, delay := range []float64{0, 0.002} {
			p := demoProblem(f, delay)
			d, err := DesignAxis(p, nil)
			if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			l, err := RootLocus(p, d.Ctrl, 10)
			if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			if l.Design < 0 || l.Gains[l.Design] != 1 {
				t.Fatalf("%s: k = 1 is not a tracked gain", f)
			}
			if dist := locusMatch(l.At(l.Design), d.Verif.Poles); dist > 1e-6 {
				t.Errorf("%s delay %g: locus at k = 1 %v, design poles %v (rel %.3g)", f, delay, l.At(l.Design), d.Verif.Poles, dist)
			}
			want := len(d.Ctrl.TF().Den.Trim()) - 1 + len(p.Plant.Model.Poles) + len(p.Sensor.Poles)
			if delay > 0 {
				want += PadeOrder
				if l.PadeOrder != PadeOrder {
					t.Errorf("%s: PadeOrder %d, want %d", f, l.PadeOrder, PadeOrder)
				}
			}
			if len(l.Branches) != want || len(l.Poles) != want {
				t.Errorf("%s delay %g: %d branches, %d poles, want %d", f, delay, len(l.Branches), len(l.Poles), want)
			}
			for b, br := range l.Branches {
				if len(br) != len(l.Gains) {
					t.Fatalf("%s: branch %d has %d points for %d gains", f, b, len(br), len(l.Gains))
				}
				if br[0] != l.Poles[b] {
					t.Errorf("%s: branch %d starts at %v, not at open-loop pole %v", f, b, br[0], l.Poles[b])
				}
			}
			if l.Gains[0] != 0 || l.Gains[len(l.Gains)-1] != 10 {
				t.Errorf("%s: gains from %g to %g, want 0 to 10", f, l.Gains[0], l.Gains[len(l.Gains)-1])
			}
			checkContinuous(t, string(f), l)
		}
	}
}

// checkContinuous fails on a branch that zig-zags: a continuous root path
// cannot jump across the real axis between neighbouring gains (a swap of
// a root with its conjugate, the mark of tracking by sorted order), and it
// does not jump farther than the step rule allows. Only at the floor step,
// where two roots collide and move like √(k − k_b), may a step be longer.
func checkContinuous(t *testing.T, name string, l *Locus) {
	t.Helper()
	scale := scaleOf(l.Poles, l.Zeros)
	floor := math.Max(0.01*scale, func() float64 {
		m := math.Inf(1)
		for _, r := range append(append([]complex128(nil), l.Poles...), l.Zeros...) {
			if a := cmplx.Abs(r); a > 0 {
				m = math.Min(m, a)
			}
		}
		return m
	}())
	for b, br := range l.Branches {
		for i := 1; i < len(br); i++ {
			a, c := br[i-1], br[i]
			// A sign flip of the imaginary part with both points clear of
			// the real axis by more than the step is a jump to the mirror.
			allow := locusStepRel * math.Max(cmplx.Abs(a), floor)
			if imag(a)*imag(c) < 0 && math.Abs(imag(a)) > allow && math.Abs(imag(c)) > allow {
				t.Errorf("%s: branch %d jumps across the real axis at k = %g: %v → %v", name, b, l.Gains[i], a, c)
			}
			floorStep := l.Gains[i]-l.Gains[i-1] <= 1.0001*locusMinStep*l.KMax
			if d := cmplx.Abs(c - a); d > 1.0001*allow && !floorStep {
				t.Errorf("%s: branch %d steps %.4g at k = %g, more than %.4g", name, b, d, l.Gains[i], allow)
			}
		}
	}
}

// K/(s(s + 2)) has the closed-loop roots −1 ± √(1 − K) (the quadratic
// formula): both branches run along the real axis to the breakaway point
// −1 at K = 1 and then straight up and down the line Re s = −1. Each branch
// must stay on one side after the breakaway.
func TestLocusBreakawayByFormula(t *testing.T) {
	l, err := LoopLocus(lti.Poly{1}, lti.Poly{0, 2, 1}, 10)
	if err != nil {
		t.Fatal(err)
	}
	for b, br := range l.Branches {
		side := 0.0
		for i, r := range br {
			k := l.Gains[i]
			var want [2]complex128
			if k <= 1 {
				q := math.Sqrt(1 - k)
				want = [2]complex128{complex(-1+q, 0), complex(-1-q, 0)}
			} else {
				q := math.Sqrt(k - 1)
				want = [2]complex128{complex(-1, q), complex(-1, -q)}
			}
			// 1e-7: a double root is only determined to about √eps
			// relative near K = 1 (the perturbation bound, as for
			// numpy.roots); elsewhere the agreement is to rounding.
			if math.Min(cmplx.Abs(r-want[0]), cmplx.Abs(r-want[1])) > 1e-7 {
				t.Fatalf("branch %d at K = %g: %v, want one of %v", b, k, r, want)
			}
			if k > 1.01 {
				s := math.Copysign(1, imag(r))
				if side == 0 {
					side = s
				} else if s != side {
					t.Fatalf("branch %d changes half-plane at K = %g (zig-zag)", b, k)
				}
			}
		}
	}
	checkContinuous(t, "K/(s(s+2))", l)
}

// The root-locus asymptotes (Franklin, Powell & Emami-Naeini, Feedback
// airframe.Control of Dynamic Systems, the rules of root-locus construction, from
// memory): as K → ∞, n − m branches go to infinity along rays at angles
// (2q + 1)·180°/(n − m) from the centroid (Σp − Σz)/(n − m). Checked two
// ways on delay-free loops: the formula values written out by hand, and
// the tracked roots at a large gain. For n − m ≥ 2 the sum of all
// closed-loop roots is −a_(n−1), independent of K, so the mean of the far
// roots differs from the centroid only by the m roots' distance from the
// zeros, O(1/K); the direction of a far root from the centroid differs from
// its asymptote by O(c/R²) rad with R ≈ K^(1/(n−m)) its distance and c of
// the order of the squared spread of the poles (≈ 10 here). At K = 1e12,
// R ≥ 1000 and both are far below the tolerances (1e-3 absolute, 0.01°).
func TestLocusAsymptotes(t *testing.T) {
	for _, c := range []struct {
		name     string
		num, den []complex128 // zeros and poles
		centroid float64
		angles   []float64
	}{
		{"K/(s(s+1)(s+2))", nil, []complex128{0, -1, -2}, -1, []float64{60, 180, -60}},
		{"K(s+3)/(s(s+1)(s+2)(s+4))", []complex128{-3}, []complex128{0, -1, -2, -4}, -4.0 / 3, []float64{60, 180, -60}},
		// Ogata's classic fourth-order example, poles 0, −4, −2 ± 4j:
		// centroid −2, asymptotes ±45° and ±135°.
		{"K/(s(s+4)(s²+4s+20))", nil, []complex128{0, -4, complex(-2, 4), complex(-2, -4)}, -2, []float64{45, 135, -135, -45}},
		{"K(s+1)/(s²(s+9))", []complex128{-1}, []complex128{0, 0, -9}, -4, []float64{90, -90}},
	} {
		num, err := lti.FromRoots(c.num)
		if err != nil {
			t.Fatal(err)
		}
		den, err := lti.FromRoots(c.den)
		if err != nil {
			t.Fatal(err)
		}
		l, err := LoopLocus(num, den, 1e12)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		cen, ang, ok := l.Asymptotes()
		if !ok || math.Abs(cen-c.centroid) > 1e-12 || len(ang) != len(c.angles) {
			t.Fatalf("%s: asymptotes %g %v, want %g %v", c.name, cen, ang, c.centroid, c.angles)
		}
		for i := range ang {
			if math.Abs(ang[i]-c.angles[i]) > 1e-9 {
				t.Errorf("%s: asymptote %d at %g°, want %g°", c.name, i, ang[i], c.angles[i])
			}
		}
		// The far roots: those not near a zero.
		nm := len(c.den) - len(c.num)
		last := l.At(len(l.Gains) - 1)
		var far []complex128
		for _, r := range last {
			near := false
			for _, z := range c.num {
				if cmplx.Abs(r-z) < 1e-2 {
					near = true
				}
			}
			if !near {
				far = append(far, r)
			}
		}
		if len(far) != nm {
			t.Fatalf("%s: %d far roots, want %d", c.name, len(far), nm)
		}
		var mean complex128
		for _, r := range far {
			mean += r / complex(float64(nm), 0)
		}
		if cmplx.Abs(mean-complex(c.centroid, 0)) > 1e-3 {
			t.Errorf("%s: far roots centred at %v, centroid %g", c.name, mean, c.centroid)
		}
		for _, r := range far {
			a := cmplx.Phase(r-complex(c.centroid, 0)) * 180 / math.Pi
			best := math.Inf(1)
			for _, w := range c.angles {
				best = math.Min(best, math.Abs(wrapDeg(a-w)))
			}
			if best > 0.01 {
				t.Errorf("%s: far root %v at %.4f° from the centroid, no asymptote within 0.01° of %v", c.name, r, a, c.angles)
			}
		}
		checkContinuous(t, c.name, l)
	}
}

// The locus of K/(s(s + 1)(s + 2)) crosses the imaginary axis at K = 6,
// ω = √2 rad/s (Routh–Hurwitz, in every text of REFERENCES.md). The
// crossing is found between two tracked gains and interpolated linearly;
// the steps there are 2 % of |s|, so the interpolation error is far below
// the 0.5 % allowed, which a wrong locus would still miss by far.
func TestLocusRouthCrossing(t *testing.T) {
	l, err := LoopLocus(lti.Poly{1}, lti.Poly{0, 2, 3, 1}, 10)
	if err != nil {
		t.Fatal(err)
	}
	found := 0
	for b, br := range l.Branches {
		for i := 1; i < len(br); i++ {
			if real(br[i-1]) < 0 && real(br[i]) >= 0 {
				f := -real(br[i-1]) / (real(br[i]) - real(br[i-1]))
				k := l.Gains[i-1] + f*(l.Gains[i]-l.Gains[i-1])
				w := math.Abs(imag(br[i-1]) + f*(imag(br[i])-imag(br[i-1])))
				if math.Abs(k-6) > 0.03 || math.Abs(w-math.Sqrt2) > 0.005*math.Sqrt2 {
					t.Errorf("branch %d crosses at K = %.5f, ω = %.5f; want 6, √2", b, k, w)
				}
				found++
			}
		}
	}
	if found != 2 {
		t.Errorf("%d branches cross into the right half plane, want 2", found)
	}
}

// The tracked roots at several gains against numpy.roots of Den + k·Num
// (Debian's python3-numpy, version in the log), on the demo PID loop with
// the Padé delay. 1e-7 relative: both are eigenvalue solvers on the same
// well-separated polynomial (the Aberth refinement converges to 1e-12).
func TestLocusAgainstNumPy(t *testing.T) {
	p := demoProblem(airframe.FormPID, 0.002)
	d, err := DesignAxis(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	l, err := RootLocus(p, d.Ctrl, 10)
	if err != nil {
		t.Fatal(err)
	}
	type in struct {
		Num, Den []float64
		K        []float64
	}
	var idx []int
	for i := 1; i < len(l.Gains); i += len(l.Gains) / 7 {
		idx = append(idx, i)
	}
	idx = append(idx, l.Design, len(l.Gains)-1)
	q := in{Num: l.Num.Descending(), Den: l.Den.Descending()}
	for _, i := range idx {
		q.K = append(q.K, l.Gains[i])
	}
	var out [][][2]float64
	pyref.Run(t, `
import json, sys, numpy as np
q = json.load(sys.stdin)
num, den = np.array(q['Num']), np.array(q['Den'])
res = []
for k in q['K']:
    r = np.roots(np.polyadd(den, k * num))
    res.append([[float(z.real), float(z.imag)] for z in r])
json.dump(res, sys.stdout)
`, q, &out)
	ver, _ := pyref.Versions()
	t.Logf("reference: %s", ver)
	for j, i := range idx {
		var want []complex128
		for _, z := range out[j] {
			want = append(want, complex(z[0], z[1]))
		}
		if dist := locusMatch(l.At(i), want); dist > 1e-7 {
			t.Errorf("k = %g: locus %v, numpy %v (rel %.3g)", l.Gains[i], l.At(i), want, dist)
		}
	}
}

// Bad input gives an error, never a panic.
func TestLocusRejectsBadLoops(t *testing.T) {
	for _, c := range []struct {
		name     string
		num, den lti.Poly
		kmax     float64
	}{
		{"no poles", lti.Poly{1}, lti.Poly{1}, 10},
		{"zero gain", lti.Poly{}, lti.Poly{0, 1}, 10},
		{"improper", lti.Poly{0, 0, 1}, lti.Poly{0, 1}, 10},
		{"NaN", lti.Poly{math.NaN()}, lti.Poly{0, 1}, 10},
		{"kmax < 1", lti.Poly{1}, lti.Poly{0, 1}, 0.5},
		{"kmax Inf", lti.Poly{1}, lti.Poly{0, 1}, math.Inf(1)},
		{"root through infinity", lti.Poly{1, -1}, lti.Poly{1, 1}, 10},
	} {
		if _, err := LoopLocus(c.num, c.den, c.kmax); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}

// The minimum-distance assignment against brute force over all
// permutations (the definition), on small cost matrices.
func TestAssignIsMinimum(t *testing.T) {
	costs := [][]float64{
		{4, 1, 3, 2, 0, 5, 3, 2, 2},
		{1, 2, 3, 2, 4, 6, 3, 6, 9},
		{0, 0, 0, 0, 0, 0, 0, 0, 0},
		{10, 19, 8, 15, 10, 18, 7, 17, 13, 16, 9, 14, 12, 19, 8, 18},
	}
	for _, c := range costs {
		n := int(math.Sqrt(float64(len(c))))
		got := assign(n, c)
		sum := 0.0
		seen := map[int]bool{}
		for i, j := range got {
			sum += c[i*n+j]
			seen[j] = true
		}
		if len(seen) != n {
			t.Fatalf("%v: not a permutation: %v", c, got)
		}
		best := math.Inf(1)
		perm := make([]int, n)
		for i := range perm {
			perm[i] = i
		}
		var rec func(int)
		rec = func(at int) {
			if at == n {
				s := 0.0
				for i, j := range perm {
					s += c[i*n+j]
				}
				best = math.Min(best, s)
				return
			}
			for i := at; i < n; i++ {
				perm[at], perm[i] = perm[i], perm[at]
				rec(at + 1)
				perm[at], perm[i] = perm[i], perm[at]
			}
		}
		rec(0)
		if sum != best {
			t.Errorf("%v: assignment costs %g, minimum %g", c, sum, best)
		}
	}
}

func BenchmarkRootLocus(b *testing.B) {
	p := demoProblem(airframe.FormPID, 0.002)
	d, err := DesignAxis(p, nil)
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for b.Loop() {
		if _, err := RootLocus(p, d.Ctrl, 10); err != nil {
			b.Fatal(err)
		}
	}
}
