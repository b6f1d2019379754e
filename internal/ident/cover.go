package ident

import (
	"fmt"
	"math"
	"strings"
)

// Range is the plant's range over several logs of one axis: a nominal
// plant and the [axes.NAME.envelope] around it that covers every log's
// 95 % confidence interval.
//
// The nominal effectiveness and motor time constant are the geometric
// means of the logs' estimates (the envelope scales them, so the centre
// on a log scale keeps the two scale factors balanced), the nominal delay
// the arithmetic mean (the envelope adds to it). The scales are rounded
// outwards to two decimals and the added delay to 0.1 ms, so that the
// envelope never covers less than the intervals.
type Range struct {
	Effectiveness, MotorTau, Delay float64
	GainScale, LagScale, DelayAdd  [2]float64
	// Logs are the per-log results, in the order given.
	Logs []*Result
	// Names are the logs' names, for the comments.
	Names []string
}

// Cover returns the Range of the results of several logs of one axis.
func Cover(names []string, rs []*Result) (*Range, error) {
	if len(rs) < 2 || len(names) != len(rs) {
		return nil, fmt.Errorf("identify: a range needs two or more logs (%d given)", len(rs))
	}
	var le, lt, d float64
	for _, r := range rs {
		if !(r.Effectiveness.Value > 0) || !(r.MotorTau.Value > 0) {
			return nil, fmt.Errorf("identify: a log's effectiveness %g or motor_tau %g is not positive", r.Effectiveness.Value, r.MotorTau.Value)
		}
		le += math.Log(r.Effectiveness.Value)
		lt += math.Log(r.MotorTau.Value)
		d += r.Delay.Value
	}
	n := float64(len(rs))
	g := &Range{Effectiveness: math.Exp(le / n), MotorTau: math.Exp(lt / n), Delay: d / n, Logs: rs, Names: names}
	g.GainScale = scaleCover(g.Effectiveness, rs, func(r *Result) Param { return r.Effectiveness })
	g.LagScale = scaleCover(g.MotorTau, rs, func(r *Result) Param { return r.MotorTau })
	for _, s := range []struct {
		key string
		v   [2]float64
	}{{"gain_scale", g.GainScale}, {"lag_scale", g.LagScale}} {
		if s.v[0] < 0.1 || s.v[1] > 10 {
			return nil, fmt.Errorf("identify: the logs' intervals need %s = [%g, %g], beyond the envelope's [0.1, 10]: the logs disagree more than one plant's range, or a fit is poor (see the per-log estimates)", s.key, s.v[0], s.v[1])
		}
	}
	lo, hi := 0.0, 0.0
	for _, r := range rs {
		lo = math.Min(lo, r.Delay.Lo-g.Delay)
		hi = math.Max(hi, r.Delay.Hi-g.Delay)
	}
	// Not below a delay of 0 (the airframe file's rule: delay + low ≥ 0).
	g.DelayAdd = [2]float64{math.Max(math.Floor(lo*1e4+1e-9)/1e4, -g.Delay), math.Ceil(hi*1e4-1e-9) / 1e4}
	return g, nil
}

// scaleCover returns [lo, hi] with lo ≤ 1 ≤ hi covering every log's
// interval of p relative to nom, rounded outwards to 0.01 (and lo not
// below 0.01, which Cover then refuses with the rest outside [0.1, 10]).
func scaleCover(nom float64, rs []*Result, p func(*Result) Param) [2]float64 {
	lo, hi := 1.0, 1.0
	for _, r := range rs {
		q := p(r)
		lo = math.Min(lo, q.Lo/nom)
		hi = math.Max(hi, q.Hi/nom)
	}
	// The 1e-9 keeps a ratio that is a round number in exact arithmetic
	// (0.9 computed as 0.8999999999999999) from rounding a step further.
	return [2]float64{math.Max(0.01, math.Floor(lo*100+1e-9)/100), math.Ceil(hi*100-1e-9) / 100}
}

// TOML returns the nominal [axes.AXIS.plant] and the [axes.AXIS.envelope]
// that covers the logs, with the per-log estimates as comments.
func (g *Range) TOML(axis string) string {
	var b strings.Builder
	c := func(format string, a ...any) { fmt.Fprintf(&b, "# "+format+"\n", a...) }
	c("Range of %d logs identified by locusmith identify; per log, the estimate [95 %% interval]:", len(g.Logs))
	for i, r := range g.Logs {
		c("  %s: effectiveness %s [%s, %s], motor_tau %s [%s, %s] s, delay %s [%s, %s] s", commentSafe(g.Names[i]),
			strconvG(r.Effectiveness.Value, 4), strconvG(r.Effectiveness.Lo, 4), strconvG(r.Effectiveness.Hi, 4),
			strconvG(r.MotorTau.Value, 4), strconvG(r.MotorTau.Lo, 4), strconvG(r.MotorTau.Hi, 4),
			strconvG(r.Delay.Value, 4), strconvG(r.Delay.Lo, 4), strconvG(r.Delay.Hi, 4))
	}
	c("Nominal: geometric mean of effectiveness and motor_tau, mean delay; the envelope")
	c("covers every log's 95 %% interval, rounded outwards.")
	fmt.Fprintf(&b, "[axes.%s.plant]\n", axis)
	fmt.Fprintf(&b, "effectiveness = %s\n", tomlFloat(g.Effectiveness, 4))
	fmt.Fprintf(&b, "motor_tau = %s\n", tomlFloat(g.MotorTau, 4))
	fmt.Fprintf(&b, "delay = %s\n\n", tomlFloat(g.Delay, 4))
	fmt.Fprintf(&b, "[axes.%s.envelope]\n", axis)
	fmt.Fprintf(&b, "gain_scale = [%s, %s]\n", tomlFloat(g.GainScale[0], 3), tomlFloat(g.GainScale[1], 3))
	fmt.Fprintf(&b, "lag_scale = [%s, %s]\n", tomlFloat(g.LagScale[0], 3), tomlFloat(g.LagScale[1], 3))
	fmt.Fprintf(&b, "delay_add = [%s, %s]\n", tomlFloat(g.DelayAdd[0], 4), tomlFloat(g.DelayAdd[1], 4))
	return b.String()
}
