package main

import (
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"locusmith/internal/lti"
)

// simPlant is the truth of a simulated log (demo data: an invented
// airframe): effectiveness/(s·(tau·s + 1)) · ωp²/(s² + 2ζ·ωp·s + ωp²) ·
// e^(−s·delay), the mode factor left out when modeHz is 0.
type simPlant struct {
	eff, tau, delay float64
	modeHz, zeta    float64
}

// zpk is the continuous plant.
func (p simPlant) zpk() lti.ZPK {
	z := lti.ZPK{Gain: p.eff / p.tau, Poles: []complex128{0, complex(-1/p.tau, 0)}}
	if p.modeHz > 0 {
		w := 2 * math.Pi * p.modeHz
		im := w * math.Sqrt(1-p.zeta*p.zeta)
		z.Gain *= w * w
		z.Poles = append(z.Poles, complex(-p.zeta*w, im), complex(-p.zeta*w, -im))
	}
	return z
}

// simLog simulates n samples at fs of the plant in the loop
// u = r − kp·y (kp = 0: open loop, u = r) with r white of standard
// deviation amp and white gyro noise of standard deviation noise on y,
// the exact zero-order-hold equivalent with the delay (lti.ZOHDelay,
// checked against SciPy in internal/lti), and returns the columns
// time, command, rate and excitation.
func simLog(t testing.TB, p simPlant, fs float64, n int, kp, amp, noise float64, seed uint64) (tm, u, y, r []float64) {
	t.Helper()
	ss, err := p.zpk().CascadeSS()
	if err != nil {
		t.Fatal(err)
	}
	whole, frac := lti.SplitDelay(p.delay, 1/fs)
	dd, err := lti.ZOHDelay(ss, 1/fs, frac)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, 99))
	x, nx := make([]float64, dd.N), make([]float64, dd.N)
	hist := make([]float64, whole+1)
	tm, u, y, r = make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for k := range n {
		var c float64
		for i := range dd.N {
			c += dd.C[i] * x[i]
		}
		tm[k] = float64(k) / fs
		r[k] = amp * rng.NormFloat64()
		y[k] = c + noise*rng.NormFloat64()
		u[k] = r[k] - kp*y[k]
		copy(hist[1:], hist[:whole])
		hist[0] = u[k]
		in := hist[whole]
		for i := range dd.N {
			s := dd.B[i] * in
			for j := range dd.N {
				s += dd.A[i*dd.N+j] * x[j]
			}
			nx[i] = s
		}
		x, nx = nx, x
	}
	return tm, u, y, r
}

// writeSimCSV writes the columns into dir/name with the delimiter sep,
// the rate multiplied by rateScale (180/π for a log in °/s), and returns
// the path.
func writeSimCSV(t testing.TB, dir, name string, sep string, rateScale float64, tm, u, y, r []float64) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("# demo data: invented airframe, simulated\n")
	b.WriteString(strings.Join([]string{"time", "command", "rate", "exc"}, sep) + "\n")
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', 9, 64) }
	for k := range tm {
		b.WriteString(f(tm[k]) + sep + f(u[k]) + sep + f(y[k]*rateScale) + sep + f(r[k]) + "\n")
	}
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}
