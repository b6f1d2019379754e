package discrete

import (
	"math"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// TestUnsettledCornerSettling: a plant whose step has not settled within
// the envelope's record (eight settling limits) reports the settling time
// of a longer record, not the record's end (a check once read 0.8 s where
// the nominal verification showed 3.5 s). Source: the hand formula of a
// first-order sampled loop. A p controller on an integrator K/s (ZOH, no
// compute delay, no sensor) closes y[k] = 1 − (1 − α)^k with α = Kp·K·T;
// the error e_k = (1 − α)^k last lies outside the 2 % band at sample k =
// ⌊ln 0.02 / ln(1 − α)⌋, and the settling time interpolates to the band's
// edge between k and k + 1: T·(k + (e_k − 0.02)/(e_k − e_(k+1))). With
// α = 0.02 at 1 kHz that is 0.194 s against a record of 0.08 s.
func TestUnsettledCornerSettling(t *testing.T) {
	src := `airframe = "slow_probe"
description = "demo data: an invented integrating axis under a slow p loop; not a real vehicle"
loop_hz = 1000.0
compute_delay = 0

[axes.a.plant]
gain = 100.0
poles = [0.0]

[axes.a.spec]
settling_time = 0.01
overshoot = 0.1

[axes.a.control]
form = "p"
refine = false
`
	f, err := airframe.Parse("slow.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	p := f.Axes[0]
	const T, K, alpha = 0.001, 100.0, 0.02
	kp := alpha / (K * T)
	k, _, err := Realize(synth.Controller{Form: airframe.FormP, Kp: kp, B: 1}, p.Ctrl, T, 0)
	if err != nil {
		t.Fatal(err)
	}
	pl, err := NewPlant(p, T)
	if err != nil {
		t.Fatal(err)
	}
	fig, err := cornerFigures(p, airframe.Nominal(), pl, k, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	ks := math.Floor(math.Log(0.02) / math.Log(1-alpha))
	ek, ek1 := math.Pow(1-alpha, ks), math.Pow(1-alpha, ks+1)
	want := T * (ks + (ek-0.02)/(ek-ek1))
	if got := fig.Step.Settling; !fig.Step.Settled || math.Abs(got-want) > 1e-9 {
		t.Errorf("settling %.9g s (settled %v), want %.9g s (the record of the envelope ends at %g s)", got, fig.Step.Settled, want, 8*p.Spec.SettlingTime)
	}
}
