package discrete

import (
	"math"
	"math/rand/v2"
	"reflect"
	"slices"
	"testing"

	"locusmith/airframe"
	"locusmith/synth"
)

// TestDirectSetpoint checks what Loops.Step relies on to linearize one
// controller for both setpoint weights: linearize(k) with k.KpB = 0 and
// with k.KpB = k.Kp differ in Dr alone, and directSetpoint gives that Dr
// bit for bit, for every form and both derivative inputs.
func TestDirectSetpoint(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, f := range airframe.Forms() {
		for _, onErr := range []bool{false, true} {
			for i := 0; i < 200; i++ {
				r := func() float64 { return (rng.Float64() - 0.3) * math.Pow(10, 4*rng.Float64()-2) }
				k := Coeffs{Form: f, Kp: r(), G0: r(), G01: r(), Ad: rng.Float64(), Bd: r(), DerivativeOnError: onErr,
					B0: r(), B1: r(), A1: r()}
				k0, k1 := k, k
				k0.KpB, k1.KpB = 0, k.Kp
				c0, c1 := linearize(k0), linearize(k1)
				if !slices.Equal(c0.Ac, c1.Ac) || !slices.Equal(c0.Br, c1.Br) || !slices.Equal(c0.By, c1.By) ||
					!slices.Equal(c0.Cc, c1.Cc) || c0.M != c1.M || math.Float64bits(c0.Dy) != math.Float64bits(c1.Dy) {
					t.Fatalf("%s: the weights' controllers differ beyond Dr: %+v, %+v", f, c0, c1)
				}
				for _, kk := range []Coeffs{k0, k1} {
					if got, want := directSetpoint(kk), linearize(kk).Dr; math.Float64bits(got) != math.Float64bits(want) {
						t.Fatalf("%s: directSetpoint %v, linearize %v", f, got, want)
					}
				}
			}
		}
	}
}

// TestSameControllerFields guards realize's memory: sameController must
// compare every field of synth.Controller, and tell apart a change of any
// one of them.
func TestSameControllerFields(t *testing.T) {
	typ := reflect.TypeOf(synth.Controller{})
	if typ.NumField() != 11 {
		t.Fatalf("synth.Controller has %d fields: compare the new ones in sameController", typ.NumField())
	}
	base := synth.Controller{Form: airframe.FormPID, Kp: 1, Ki: 2, Kd: 3, Tf: 4, B: 0.5, K: 5, Zero: -6, Pole: -7}
	if !sameController(base, base) {
		t.Fatal("a controller differs from itself")
	}
	for i := 0; i < typ.NumField(); i++ {
		c := base
		f := reflect.ValueOf(&c).Elem().Field(i)
		switch f.Kind() {
		case reflect.Float64:
			f.SetFloat(math.Nextafter(f.Float(), math.Inf(1)))
		case reflect.Bool:
			f.SetBool(!f.Bool())
		case reflect.String:
			f.SetString(string(airframe.FormPI))
		case reflect.Pointer:
			// DF: the derivative filters, shared by every controller of
			// a design, compared by identity.
			f.Set(reflect.New(f.Type().Elem()))
		}
		if sameController(base, c) {
			t.Errorf("a change of %s is not seen", typ.Field(i).Name)
		}
	}
	z := base
	z.Kd = math.Copysign(0, -1)
	base.Kd = 0
	if sameController(base, z) {
		t.Error("−0 and +0 taken as the same gain")
	}
}
