package review

import (
	"math"

	"locusmith/discrete"
)

// fixedStep simulates the bit-exact integer controller of a fixed-point
// realization in the sampled loop: a setpoint step of A, the measured rate
// quantized to the input word with saturation, the raw command converted
// back and held through the compute delay and the whole samples of the
// transport delay into the ZOH plant. It returns A
// and the true rate over A at the samples (as long as the discrete step
// record), or nil when the design has no integer controller.
//
// A is half the realization's reference step (the largest step whose
// linear command stays within the limits), as in the setpoint steps of
// discrete.Accuracy: a step at the full reference would drive the
// measurement near the input full scale, where its word saturates, and
// the integrator near its limit, and the picture would show those limits
// rather than the arithmetic.
//
// The raw conversions follow the fixed-point convention of the README ("[numeric]"),
// raw = value/full_scale·2^(w−1) saturated to the word.
func fixedStep(d *discrete.Design) (float64, []float64) {
	if d == nil || d.Num == nil || d.Num.Fixed == nil {
		return 0, nil
	}
	re, fx, pl := d.Num, d.Num.Fixed, d.Plant
	if len(fx.Sections) > 0 {
		// The integer controller runs the filter chain itself, on the
		// measured rate before it.
		pl = pl.Unfiltered()
	}
	w := fx.W
	fin, fout := re.InputFullScale, re.OutputFullScale
	a := 0.5 * re.ReferenceStep
	if !(a > 0) || !(fin > 0) || !(fout > 0) || math.IsInf(a, 0) {
		return 0, nil
	}
	rr := discrete.ToRaw(a/fin, w)
	var st discrete.FixedState
	y, _ := pl.Run(d.Loop.ComputeDelay, len(d.Verif.Y), func(ym float64) float64 {
		u := fx.Step(&st, int32(rr), int32(discrete.ToRaw(ym/fin, w)))
		return discrete.FromRaw(int64(u), w) * fout
	})
	for i := range y {
		y[i] /= a
	}
	return a, y
}

// fixedOf returns the numeric realization's tables: the coefficients as
// the generated code holds them, and for fixed point the proved ranges.
func fixedOf(d *discrete.Design) *FixedPoint {
	re := d.Num
	if re == nil {
		if d.Numeric.Type.IsFixed() {
			return &FixedPoint{Type: string(d.Numeric.Type), Fixed: true, Note: "No numeric realization was computed"}
		}
		return nil
	}
	fp := &FixedPoint{Type: string(re.Type), Fixed: re.Fixed != nil}
	for _, c := range re.Coefficients {
		fc := FixedCoeff{Name: c.Name, Value: g(c.Value, 7), Quantized: g(c.Quantized, 7), Format: c.Format, RelError: g(c.RelError, 3)}
		if c.Bits > 0 {
			fc.Quantized += " (raw " + g(float64(c.Raw), 12) + ")"
		}
		fp.Coeffs = append(fp.Coeffs, fc)
	}
	for _, r := range re.Ranges {
		fr := FixedRange{Name: r.Name + " (" + r.Format + ")", Bound: g(r.Bound, 6), Capacity: g(r.Capacity, 10), Headroom: g(r.HeadroomBits, 3) + " bits"}
		if r.Saturated {
			fr.Headroom += ", saturates: " + mdText(r.Note)
		} else if r.HeadroomBits < 0 {
			fr.Headroom = "**" + fr.Headroom + ": possible overflow**"
		}
		fp.Ranges = append(fp.Ranges, fr)
	}
	if re.Fixed != nil {
		fp.Note = mdText(fixedNote(re))
	} else {
		fp.Note = "The coefficients are rounded to " + string(re.Type) + "; a floating-point controller needs no scaling and no range analysis"
	}
	return fp
}

func fixedNote(re *discrete.Realization) string {
	s := "Input full scale " + g(re.InputFullScale, 6) + " (rate units), output full scale " + g(re.OutputFullScale, 6) +
		"; reference step " + g(re.ReferenceStep, 4) +
		", input resolution " + g(re.InputResolutionBits, 3) + " bits and output resolution " + g(re.OutputResolutionBits, 3) + " bits over the settling band"
	if isFinite(re.MaxErrorLSB) && (re.MaxErrorLSB > 0 || re.SQNRdB > 0) {
		s += "; against the float64 reference model on the standard excitation: largest output error " + g(re.MaxErrorLSB, 3) + " LSB, SQNR " + dbs(re.SQNRdB) +
			", rest peak-to-peak " + g(re.RestLSB, 3) + " LSB (bound " + g(re.RestBoundLSB, 3) + ")"
	}
	if len(re.Fixed.Sections) > 0 {
		s += "; the filter chain's rounding at its output is at most " + g(re.FilterNoiseLSB, 3) + " input LSB (" + re.RoundingProof() + ")"
		if c, ok := re.Check("filter_rounding"); ok && c.OK {
			s += ", below half an LSB: the controller sees no step at engagement and exactly 0 at rest"
		}
	}
	if len(re.Fixed.DSections) > 0 {
		s += "; the derivative filters' rounding in the D term is at most " + g(re.DFilterNoiseLSB, 3) + " output LSB (" + re.RoundingProof() + ")"
	}
	return s
}
