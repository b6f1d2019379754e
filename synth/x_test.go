package synth
import ("testing";"fmt";"math";"math/cmplx")
func TestX(t *testing.T){
  p := demo(FormP)
  z := 0.6
  dir := complex(-z, math.Sqrt(1-z*z))
  for _, w := range []float64{0.1,1,10,20,30,40,50,100,1000,1e4,6e4} {
    v := p.Loop(complex(w,0)*dir)
    fmt.Println(w, cmplx.Abs(v), cmplx.Phase(v)*180/math.Pi)
  }
}
