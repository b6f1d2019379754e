package discrete_test

import (
	"bytes"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/synth"
)

// Checks of the design engine against the brute-force reference of
// engine_ref_test.go (an outside source: an exhaustive grid over the
// gains and setpoint weights, judged by discrete.Assess), on the invented
// airframes of airframes_ref_test.go.
//
// The reference is expensive (minutes), so it is stored in
// testdata/reference/NAME.json and regenerated on demand:
//
//	LOCUSMITH_REFERENCE=1 go test ./discrete -run TestReferenceRegenerate -timeout 60m -v
//
// (LOCUSMITH_REFERENCE=quad_slow_roll,mast_p regenerates only those.)
// TestReference, in the normal test run, designs each airframe with the
// tool and compares.

// refDir holds the stored reference results.
const refDir = "testdata/reference"

// refNearTool is the test's tolerance: the tool's load-rejection gain must
// be at least 95 % of the reference's best. The tool trades up to
// synth.NearBest (2 %) of the gain for less noise, and gives up 2 % a step
// when its final verification finds a design short by a hair
// (discrete.DesignAxis); the rest is the search's own resolution. The
// reference keeps 0.2 % room to every limit (refRoom), which only lowers
// it.
const refNearTool = 0.95

// refFile is the stored reference of one airframe.
type refFile struct {
	Airframe string `json:"airframe"`
	Axis     string `json:"axis"`
	Form     string `json:"form"`
	// TOMLSHA256 is the airframe text's hash: a stale reference (the
	// airframe changed) fails the test.
	TOMLSHA256 string `json:"toml_sha256"`
	// NoiseBound is the noise-gain bound every candidate was judged
	// against: the file's max_noise_gain, or the default the tool
	// reported (d.Cont.Search.NoiseBound); null when the tool reported
	// none. NoiseRatio, when set, bounds each candidate's noise gain to
	// that multiple of its own load-rejection gain instead: the search's
	// rule for p, pd and lead while it has no design (synth.NoiseRatio).
	NoiseBound *float64 `json:"noise_bound"`
	NoiseRatio float64  `json:"noise_ratio,omitempty"`
	// Room is the relative room to every limit that a candidate had to
	// keep to pass (refRoom).
	Room float64 `json:"room"`
	// Feasible reports whether any candidate passed every check; BestGain
	// is the largest load-rejection gain among them and Best that
	// controller (exact float64 values).
	Feasible bool     `json:"feasible"`
	BestGain float64  `json:"best_gain"`
	Best     *refCtrl `json:"best,omitempty"`
	// GridBestGain and GridBest are the best of the search independent of
	// the tool: the coarse grid and the climb from its best points. Best
	// is at least as good: the climb then goes on from the tool's design
	// at generation time (a local search around it, which can only show a
	// better controller nearby).
	GridBestGain float64  `json:"grid_best_gain"`
	GridBest     *refCtrl `json:"grid_best,omitempty"`
	// CoarseBestGain is the best of the coarse grid alone; CoarseAtEdge
	// names the parameters whose coarse best lies on the grid's edge.
	CoarseBestGain float64  `json:"coarse_best_gain"`
	CoarseAtEdge   []string `json:"coarse_at_edge,omitempty"`
	Grid           refGrid  `json:"grid"`
	// Assessments counts the discrete.Assess calls (GridAssessments of
	// them before the climb from the tool's design); AssessErrors those
	// that returned an error (the candidate then counts as failing).
	Assessments     int `json:"assessments"`
	GridAssessments int `json:"grid_assessments"`
	AssessErrors    int `json:"assess_errors"`
	// NoisePruned counts the candidates not judged because their gain at
	// Nyquist exceeds the noise bound (see refEngine.noiseFloor).
	NoisePruned int `json:"noise_pruned"`
	// ToolGain is the tool's load-rejection gain when the reference was
	// made, for the record (the test compares with the tool of the day).
	ToolGain float64 `json:"tool_gain_at_generation"`
}

// refCtrl is a controller's gains and setpoint weight.
type refCtrl struct {
	Kp   float64 `json:"kp,omitempty"`
	Ki   float64 `json:"ki,omitempty"`
	Kd   float64 `json:"kd,omitempty"`
	Tf   float64 `json:"tf,omitempty"`
	K    float64 `json:"k,omitempty"`
	Zero float64 `json:"zero,omitempty"`
	Pole float64 `json:"pole,omitempty"`
	B    float64 `json:"b"`
}

// refGrid says how dense the reference was.
type refGrid struct {
	Params  []refParam `json:"params"`
	Weights []float64  `json:"weights"`
	Coarse  int        `json:"coarse_points"`
	// The climb's local grids (engine_ref_test.go): Grids grids of
	// (2·Division + 1)^n points, the first around Seeds centres, the
	// spacing divided by Division when a grid finds nothing better, then
	// ToolGrids more from the tool's design; FinalStep is the last
	// spacing, decades per parameter.
	Seeds     int       `json:"refine_seeds"`
	Grids     int       `json:"refine_grids"`
	ToolGrids int       `json:"refine_grids_from_tool"`
	Division  int       `json:"refine_division"`
	FinalStep []float64 `json:"refine_final_step_decades"`
}

func toRefCtrl(c synth.Controller) *refCtrl {
	return &refCtrl{Kp: c.Kp, Ki: c.Ki, Kd: c.Kd, Tf: c.Tf, K: c.K, Zero: c.Zero, Pole: c.Pole, B: c.B}
}

// controller rebuilds the stored controller for the axis p.
func (r refCtrl) controller(p airframe.Axis) synth.Controller {
	return synth.Controller{Form: p.Ctrl.Form, Kp: r.Kp, Ki: r.Ki, Kd: r.Kd, Tf: r.Tf, K: r.K, Zero: r.Zero, Pole: r.Pole,
		B: r.B, DerivativeOnError: p.Ctrl.DerivativeOnError}
}

// refCase is a parsed airframe of the reference.
type refCase struct {
	af   refAirframe
	file *airframe.File
	p    airframe.Axis
}

func loadRefCase(af refAirframe) (refCase, error) {
	f, err := airframe.Parse(af.name+".toml", []byte(af.toml))
	if err != nil {
		return refCase{}, err
	}
	if len(f.Axes) != 1 {
		return refCase{}, errors.New("a reference airframe has one axis")
	}
	return refCase{af: af, file: f, p: f.Axes[0]}, nil
}

// refAssessed are the checks discrete.Assess makes: the ones the tool's
// design must pass to count as passing here (the design's own checks add
// sampling and the numeric realization's, which the reference does not
// judge).
var refAssessed = []string{"stable", "overshoot", "settling_time", "phase_margin", "gain_margin", "max_sensitivity",
	"steady_error", "hold_rate", "disturbance_recovery", "noise_gain"}

// refDesigns holds the tool's design of each reference airframe as
// written, made once per test binary: TestReference judges it against the
// reference and TestEnvelopeAgainstSciPy re-simulates it in SciPy, and
// one design serves both (16 designs that each took twice). Read them,
// do not change them.
var refDesigns sync.Map // airframe name → *refDesign

// refDesign is one entry of refDesigns.
type refDesign struct {
	once sync.Once
	d    *discrete.Design
	err  error
}

// refToolDesign returns the tool's design of the reference airframe's
// axis as written (discrete.DesignAxis, which DesignAirframe runs for
// each axis), made once.
func refToolDesign(rc refCase) (*discrete.Design, error) {
	v, _ := refDesigns.LoadOrStore(rc.af.name, &refDesign{})
	e := v.(*refDesign)
	e.once.Do(func() { e.d, e.err = discrete.DesignAxis(rc.p, rc.file.Loop, rc.file.Numeric) })
	return e.d, e.err
}

// toolOutcome designs the axis with the tool and returns its design, its
// load-rejection gain and whether it passes every check the reference
// judges.
func toolOutcome(rc refCase) (*discrete.Design, float64, bool, []string, error) {
	d, err := discrete.DesignAxis(rc.p, rc.file.Loop, rc.file.Numeric)
	if err != nil {
		return nil, 0, false, nil, err
	}
	gain, ok, fails := judgeTool(d)
	return d, gain, ok, fails, nil
}

// judgeTool returns the load-rejection gain of the tool's design d and
// whether it passes every check the reference judges (and the failures).
func judgeTool(d *discrete.Design) (float64, bool, []string) {
	ok := d.Cont.Met
	var fails []string
	for _, c := range d.Checks {
		if slices.Contains(refAssessed, c.Name) && !c.OK {
			ok = false
			fails = append(fails, c.String())
		}
	}
	return refLoadGain(d.Cont.Ctrl), ok, fails
}

// TestReferenceRegenerate recomputes the brute-force reference and writes
// testdata/reference/NAME.json. It runs only with LOCUSMITH_REFERENCE set
// (1 for every airframe, or a comma-separated list of names).
//
// With LOCUSMITH_REFERENCE_FILES (a comma-separated list of one-axis
// airframe files; relative paths are taken from this package's directory,
// where go test runs) it runs the reference on those files instead of
// the suite's (LOCUSMITH_REFERENCE is then ignored) and writes PATH.json
// beside each PATH.toml, for a campaign on airframes outside the suite;
// the log gives the tool's gain beside each reference's best.
func TestReferenceRegenerate(t *testing.T) {
	sel := os.Getenv("LOCUSMITH_REFERENCE")
	files := os.Getenv("LOCUSMITH_REFERENCE_FILES")
	if sel == "" && files == "" {
		t.Skip("set LOCUSMITH_REFERENCE=1 to regenerate the brute-force reference (minutes), or LOCUSMITH_REFERENCE_FILES to run it on airframe files")
	}
	afs, dir := refAirframes(), refDir
	if files != "" {
		afs, dir, sel = nil, "", "1"
		for _, path := range strings.Split(files, ",") {
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			afs = append(afs, refAirframe{name: strings.TrimSuffix(path, ".toml"), toml: string(data)})
		}
	}
	if files == "" {
		if err := os.MkdirAll(refDir, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	// One token per core: the airframes run at once, each judging a batch
	// of candidates at a time, and every Assess holds a token.
	sem := make(chan struct{}, runtime.GOMAXPROCS(0))
	start := time.Now()
	var wg sync.WaitGroup
	for _, af := range afs {
		if sel != "1" && !slices.Contains(strings.Split(sel, ","), af.name) {
			continue
		}
		wg.Add(1)
		go func() {
			defer wg.Done()
			t0 := time.Now()
			rf, err := regenerate(af, sem)
			if err != nil {
				t.Errorf("%s: %v", af.name, err)
				return
			}
			data, err := json.MarshalIndent(rf, "", "  ")
			if err != nil {
				t.Errorf("%s: %v", af.name, err)
				return
			}
			data = append(data, '\n')
			if err := os.WriteFile(filepath.Join(dir, af.name+".json"), data, 0o644); err != nil {
				t.Errorf("%s: %v", af.name, err)
				return
			}
			t.Logf("%-16s feasible=%v best=%.6g grid=%.6g (coarse %.6g) tool=%.6g assessments=%d (grid %d) errors=%d pruned=%d edge=%v  %v",
				af.name, rf.Feasible, rf.BestGain, rf.GridBestGain, rf.CoarseBestGain, rf.ToolGain, rf.Assessments, rf.GridAssessments,
				rf.AssessErrors, rf.NoisePruned, rf.CoarseAtEdge, time.Since(t0).Round(time.Second))
		}()
	}
	wg.Wait()
	t.Logf("reference regenerated in %v on %d cores", time.Since(start).Round(time.Second), cap(sem))
}

// regenerate runs the reference of one airframe.
func regenerate(af refAirframe, sem chan struct{}) (*refFile, error) {
	rc, err := loadRefCase(af)
	if err != nil {
		return nil, err
	}
	p := rc.p
	// The tool's own design gives the noise bound the reference judges
	// against, when the file gives none (the tool's default: the knee of
	// pi and pid, a multiple of the least noise gain of p, pd and lead).
	d, toolGain, _, _, err := toolOutcome(rc)
	if err != nil {
		return nil, err
	}
	fam, err := newRefFamily(p)
	if err != nil {
		return nil, err
	}
	e := &refEngine{p: p, loop: rc.file.Loop, fam: fam, bs: refWeights(p), sem: sem, judged: map[string]bool{}}
	rf := &refFile{Airframe: rc.file.Airframe, Axis: p.Name, Form: string(p.Ctrl.Form), TOMLSHA256: rc.file.SHA256, ToolGain: toolGain, Room: refRoom}
	switch nb := d.Cont.Search.NoiseBound; {
	case p.Spec.MaxNoiseGain > 0:
		e.nb = p.Spec.MaxNoiseGain
	case !math.IsInf(nb, 1):
		e.nb = nb
	case !p.Ctrl.Form.HasIntegral():
		// The tool found no design: its search bounds the noise gain of
		// a form without an integral to synth.NoiseRatio times the load-
		// rejection gain.
		e.ratio = synth.NoiseRatio
	}
	if e.nb > 0 {
		rf.NoiseBound = &e.nb
	}
	rf.NoiseRatio = e.ratio
	r := e.run(&d.Cont.Ctrl)
	rf.Grid = refGrid{Params: fam.params, Weights: e.bs, Coarse: r.coarse, Seeds: refSeeds, Grids: r.grids, ToolGrids: r.toolGrids,
		Division: refDivision(len(fam.params)), FinalStep: r.finalStep}
	rf.Assessments, rf.GridAssessments, rf.AssessErrors, rf.NoisePruned, rf.CoarseAtEdge = r.calls, r.gridCalls, r.errs, r.pruned, r.atEdge
	if r.best != nil {
		rf.Feasible, rf.BestGain, rf.Best = true, r.best.gain, toRefCtrl(r.best.c)
	}
	if r.gridBest != nil {
		rf.GridBestGain, rf.GridBest = r.gridBest.gain, toRefCtrl(r.gridBest.c)
		rf.CoarseBestGain = r.coarseBest.gain
	}
	return rf, nil
}

// readRef reads the stored reference of an airframe.
func readRef(name string) (*refFile, error) {
	data, err := os.ReadFile(filepath.Join(refDir, name+".json"))
	if err != nil {
		return nil, err
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var rf refFile
	if err := dec.Decode(&rf); err != nil {
		return nil, err
	}
	return &rf, nil
}

// TestReference checks the design engine against the stored brute-force
// reference (source: the exhaustive grid of engine_ref_test.go, judged by
// discrete.Assess): on every airframe the tool finds a passing design
// whenever the reference found one, with a load-rejection gain of at least
// refNearTool of the reference's best; and the stored best still passes
// every check (it fails when a check changes meaning, or the reference is
// stale).
func TestReference(t *testing.T) {
	t.Parallel()
	for name := range knownShort() {
		if !slices.ContainsFunc(refAirframes(), func(a refAirframe) bool { return a.name == name }) {
			t.Errorf("knownShort names %s, which is not a reference airframe", name)
		}
	}
	for i, af := range refAirframes() {
		t.Run(af.name, func(t *testing.T) {
			if testing.Short() && i%4 != 0 {
				t.Skip("-short compares every fourth airframe with the reference")
			}
			t.Parallel()
			rc, err := loadRefCase(af)
			if err != nil {
				t.Fatal(err)
			}
			p := rc.p
			ref, err := readRef(af.name)
			if err != nil {
				t.Fatalf("no stored reference (%v): run LOCUSMITH_REFERENCE=%s go test ./discrete -run TestReferenceRegenerate -timeout 60m", err, af.name)
			}
			if ref.TOMLSHA256 != rc.file.SHA256 {
				t.Fatalf("the airframe changed since its reference was made: run LOCUSMITH_REFERENCE=%s go test ./discrete -run TestReferenceRegenerate -timeout 60m", af.name)
			}
			if ref.NoiseRatio != 0 && ref.NoiseRatio != synth.NoiseRatio {
				t.Fatalf("the reference judged noise against %g × the load-rejection gain, the search now %g: regenerate", ref.NoiseRatio, float64(synth.NoiseRatio))
			}
			d, err := refToolDesign(rc)
			if err != nil {
				t.Fatalf("tool: %v", err)
			}
			gain, ok, fails := judgeTool(d)
			if !ref.Feasible {
				// Nothing on the grid passes; the tool may still find a
				// design between grid points, or report the closest one.
				t.Logf("reference: no passing candidate; tool: passing=%v gain %.6g", ok, gain)
				return
			}
			best := ref.Best.controller(p)
			// The stored best, judged again (one Assess) against the bound
			// it was found under.
			nb := math.Inf(1)
			switch {
			case ref.NoiseBound != nil:
				nb = *ref.NoiseBound
			case ref.NoiseRatio > 0:
				nb = ref.NoiseRatio * refLoadGain(best)
			}
			cs, err := discrete.Assess(p, rc.file.Loop, best, nb)
			if err != nil {
				t.Fatalf("assess the reference's best: %v", err)
			}
			for _, c := range cs {
				if !c.OK {
					t.Errorf("the reference's best %+v no longer passes: %s (worst at %+v)", *ref.Best, c, c.Worst)
				}
			}
			// Without max_noise_gain the noise bound is the tool's default,
			// which the reference took from the tool when it was made. When
			// the default has moved since, the tool is compared under the
			// reference's bound, given as max_noise_gain: both then optimize
			// under the same constraint.
			if !ok && math.IsInf(d.Cont.Search.NoiseBound, 1) {
				// No design at all: under any noise bound that is a miss
				// (a design under the reference's bound, below, would hide
				// a search that no longer finds the feasible set alone).
				t.Errorf("MISS: the reference found a passing %s design (gain %.6g: %+v) but the tool found none: %s",
					p.Ctrl.Form, ref.BestGain, *ref.Best, strings.Join(fails, "; "))
				return
			}
			if tb := d.Cont.Search.NoiseBound; ref.NoiseBound != nil && p.Spec.MaxNoiseGain == 0 && math.Abs(tb-nb) > 1e-9*nb {
				t.Logf("the tool's default noise bound is %.6g, the reference's %.6g: the tool designs again under the latter (regenerate the reference to follow the default)", tb, nb)
				rc.p.Spec.MaxNoiseGain = nb
				if d, gain, ok, fails, err = toolOutcome(rc); err != nil {
					t.Fatalf("tool: %v", err)
				}
			}
			if !ok {
				t.Errorf("MISS: the reference found a passing %s design (gain %.6g: %+v) but the tool's design fails: %s",
					p.Ctrl.Form, ref.BestGain, *ref.Best, strings.Join(fails, "; "))
				return
			}
			from := "the grid"
			if ref.BestGain > ref.GridBestGain {
				from = "the climb from the tool's design at generation"
			}
			want := refNearTool
			if short, ok := knownShort()[af.name]; ok {
				// A documented shortfall (see knownShort): the test holds
				// the tool to it, so that it cannot get worse unnoticed.
				want = short
				t.Logf("known shortfall: the tool is held to %.1f %% of the reference here, not %.0f %%", 100*short, 100*refNearTool)
			}
			if gain < want*ref.BestGain {
				t.Errorf("MISS: the tool's load-rejection gain %.6g is %.1f %% of the reference's best %.6g, found by %s (reference %+v, noise bound %.6g; tool %+v, noise bound %.6g)",
					gain, 100*gain/ref.BestGain, ref.BestGain, from, *ref.Best, nb, *toRefCtrl(d.Cont.Ctrl), d.Cont.Search.NoiseBound)
			}
			t.Logf("tool gain %.6g (noise bound %.6g); reference %.6g (%.1f %%), of the grid alone %.6g", gain, d.Cont.Search.NoiseBound,
				ref.BestGain, 100*gain/ref.BestGain, ref.GridBestGain)
		})
	}
}

// knownShort lists the airframes where the tool's search falls short of
// the 95 % of the reference that TestReference asks, with the fraction it
// is held to instead (the measured one, less half a percent). They are
// open defects of the search, not accepted behaviour. Remove an entry
// when the search reaches 95 % there. (It is empty: hexa_noise_pitch, a
// pid under max_noise_gain 0.25 whose reference passes at a single point
// of its grid, was at 52.4 % and is at 155 % since the last refinement
// chooses among setpoint weights by 0.005; lift_filtered_pid, a pid
// behind two filters whose best designs hug the default noise bound, was
// at 85.2 % and is at 101.9 % since the local grids ride that bound.)
func knownShort() map[string]float64 {
	return map[string]float64{}
}
