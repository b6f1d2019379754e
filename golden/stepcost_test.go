package golden

import (
	"bytes"
	"fmt"
	"os"
	"regexp"
	"sort"
	"strconv"
	"strings"
	"testing"

	"locusmith/airframe"
	"locusmith/discrete"
	"locusmith/emit"
)

// The cost of the generated _step functions on a Cortex-M: the static
// instruction count of each function and the cycles of its longest path
// under a cycle model of the Cortex-M4, beside two careful hand-written C
// functions with the same features, built with the same flags.

// armInsn is one instruction of an objdump -d listing of Thumb code.
type armInsn struct {
	addr     uint64
	mnemonic string
	operands string
}

// armListing splits an objdump -d listing into functions (by symbol),
// each the list of its instructions in address order; literal-pool words
// and other data directives (".word", ".short") are not instructions and
// are left out.
func armListing(listing string) map[string][]armInsn {
	fns := map[string][]armInsn{}
	cur := ""
	head := regexp.MustCompile(`^[0-9a-f]+ <([A-Za-z0-9_.]+)>:$`)
	insn := regexp.MustCompile(`^\s+([0-9a-f]+):\t[0-9a-f ]+\t(\S+)(?:\t(.*))?$`)
	for _, l := range strings.Split(listing, "\n") {
		if m := head.FindStringSubmatch(l); m != nil {
			cur = m[1]
			continue
		}
		m := insn.FindStringSubmatch(l)
		if cur == "" || m == nil || strings.HasPrefix(m[2], ".") {
			continue
		}
		a, err := strconv.ParseUint(m[1], 16, 64)
		if err != nil {
			continue
		}
		fns[cur] = append(fns[cur], armInsn{addr: a, mnemonic: m[2], operands: m[3]})
	}
	return fns
}

// stepSize is the static instruction count of one function of an objdump
// listing: all instructions (literal pool words not counted), the
// arithmetic ones (data processing and compares, of the core or the FPU),
// any fused multiply-add and division, and the cycles of the longest path
// (cycles < 0: a loop or an unknown branch made it impossible).
type stepSize struct {
	all, arith, fused, div, cycles int
}

// armArith matches the mnemonics of arithmetic instructions (Thumb-2 and
// FPv4/FPv5, optional condition and .f32/.f64/.w suffixes): add,
// subtract, reverse subtract, multiply (and long multiply), negate,
// shifts, logical and, compare, and the FPU's vadd/vsub/vmul/vneg/vcmp
// and multiply-accumulates. The fused multiply-adds (VFMA, VFMS, VFNMA,
// VFNMS: one rounding) are counted apart as well; the older chained
// multiply-accumulates (VMLA, VMLS, VNMLA, VNMLS) round the product
// before the addition (ARM Architecture Reference Manual, ARMv7-M, the
// floating-point VMLA description; from memory), so they give the bits
// of a multiply and an add and are not fused: GCC uses them for double on
// the Cortex-M7, and TestVectorsUnderFirmwareFlags runs that code.
var (
	armArith = regexp.MustCompile(`^(adds?|adcs?|subs?|sbcs?|rsbs?|muls?|mla|mls|smull|umull|smlal|negs?|asrs?|lsls?|lsrs?|ands?|cmp|cmn|v(add|sub|mul|neg|cmpe?|fma|fms|fnma|fnms|nmul|mla|mls))(eq|ne|cs|cc|mi|pl|vs|vc|hi|ls|ge|lt|gt|le)?(\.f32|\.f64|\.w)?$`)
	armFused = regexp.MustCompile(`^v(fma|fms|fnma|fnms)`)
	armDiv   = regexp.MustCompile(`^(sdiv|udiv|vdiv|vsqrt)`)
)

// stepSizes returns the size of each *_step function in an objdump -d
// listing (and of the hand-written twins, twin_*_step). A nop that no
// path reaches (the alignment padding after the last return, before the
// literal pool) is not counted.
func stepSizes(listing string) map[string]stepSize {
	sizes := map[string]stepSize{}
	for fn, is := range armListing(listing) {
		if !strings.HasSuffix(fn, "_step") {
			continue
		}
		cycles, reached := longestPath(is)
		var sz stepSize
		for i, in := range is {
			if in.mnemonic == "nop" && !reached[i] {
				continue
			}
			sz.all++
			if armArith.MatchString(in.mnemonic) {
				sz.arith++
			}
			if armFused.MatchString(in.mnemonic) {
				sz.fused++
			}
			if armDiv.MatchString(in.mnemonic) {
				sz.div++
			}
		}
		sz.cycles = cycles
		sizes[fn] = sz
	}
	return sizes
}

// Cycle model of the Cortex-M4 (Cortex-M4 Technical Reference Manual,
// "Processor instruction timings", and the FPU chapter's instruction
// timings; from memory). P is the pipeline refill of a taken branch,
// 1 to 3 cycles by the manual depending on the target's alignment and
// width: 2 is taken for every taken branch, on both sides of a
// comparison.
const m4Refill = 2

var (
	condSuffix = `(eq|ne|cs|hs|cc|lo|mi|pl|vs|vc|hi|ls|ge|lt|gt|le)`
	armBranch  = regexp.MustCompile(`^b` + condSuffix + `?(\.n|\.w)?$`)
	armCBZ     = regexp.MustCompile(`^cbn?z$`)
	armBX      = regexp.MustCompile(`^bx` + condSuffix + `?$`)
	armCond    = regexp.MustCompile(`^b` + condSuffix + `(\.n|\.w)?$|^bx` + condSuffix + `$`)
	armTarget  = regexp.MustCompile(`(?:^|, )([0-9a-f]+) <`)
	armPop     = regexp.MustCompile(`^(pop|ldm|ldmia|ldmfd)` + condSuffix + `?(\.n|\.w)?$`)
	// armLdrPC is a single-register pop into PC: GCC returns with
	// "ldr.w pc, [sp], #4" when only LR was saved.
	armLdrPC = regexp.MustCompile(`^ldr` + condSuffix + `?(\.n|\.w)?$`)
)

// m4Cycles is the issue cost of a non-branch instruction: one cycle for
// data processing, moves, compares, IT and the single-precision FPU's
// add, subtract, multiply, negate, compare and moves (VMRS included); two
// for a load (LDR, VLDR: address and data phase) and for VSTR; one for
// STR (its data phase overlaps the next instruction, by the manual's note
// on neighbouring stores); 1+N for LDM, POP, VPUSH, VPOP of N registers;
// three for the multiply-accumulates with two roundings or one (VMLA,
// VFMA and relatives) and for LDRD; 14 for VDIV and VSQRT, and 12, the
// worst, for SDIV and UDIV; MLA and MLS two, the long multiplies one.
func m4Cycles(in armInsn) int {
	m := strings.TrimSuffix(strings.TrimSuffix(strings.TrimSuffix(in.mnemonic, ".w"), ".n"), ".f32")
	m = strings.TrimSuffix(m, ".f64")
	regs := strings.Count(in.operands, ",") + 1
	switch {
	case strings.HasPrefix(m, "vdiv"), strings.HasPrefix(m, "vsqrt"):
		return 14
	case strings.HasPrefix(m, "sdiv"), strings.HasPrefix(m, "udiv"):
		return 12
	case armFused.MatchString(m), regexp.MustCompile(`^vn?ml[as]`).MatchString(m):
		return 3
	case strings.HasPrefix(m, "vpush"), strings.HasPrefix(m, "vpop"), strings.HasPrefix(m, "vldm"), strings.HasPrefix(m, "vstm"):
		return 1 + regs
	case strings.HasPrefix(m, "push"), strings.HasPrefix(m, "stm"):
		return 1 + regs
	case armPop.MatchString(m):
		n := 1 + regs
		if strings.Contains(in.operands, "pc") {
			n += m4Refill
		}
		return n
	case strings.HasPrefix(m, "ldrd"):
		return 3
	case strings.HasPrefix(m, "strd"):
		return 2
	case strings.HasPrefix(m, "ldr") && strings.HasPrefix(in.operands, "pc,"):
		return 2 + m4Refill // a load into PC: the load, then the refill
	case strings.HasPrefix(m, "ldr"), strings.HasPrefix(m, "vldr"), strings.HasPrefix(m, "vstr"):
		return 2
	case strings.HasPrefix(m, "mla"), strings.HasPrefix(m, "mls"):
		return 2
	case strings.HasPrefix(m, "bl"):
		return 1 + m4Refill
	}
	return 1
}

// longestPath returns the cycles of the longest path through a function
// from its first instruction to a return, under m4Cycles, and which
// instructions some path reaches: a conditional branch costs 1 not taken
// and 1+P taken, an unconditional one 1+P, a return (BX LR, POP {..., PC})
// 1+P; an instruction under IT costs its cycles whether its condition
// holds or not. A branch may go backwards (GCC places a rare path after
// the return and jumps back); a path that comes back to an instruction it
// passed (a loop), a branch to an address that is not an instruction of
// the function (other than a tail call out of it) or a path that runs off
// its end make the result −1. A return is BX LR, a POP or LDM that loads
// PC, or an LDR into PC (2+P).
func longestPath(is []armInsn) (int, []bool) {
	at := map[uint64]int{}
	for i, in := range is {
		at[in.addr] = i
	}
	const (
		unseen = iota
		active
		done
	)
	state := make([]int, len(is))
	memo := make([]int, len(is))
	reached := make([]bool, len(is))
	failed := false
	var walk func(i int) int
	walk = func(i int) int {
		if i >= len(is) {
			failed = true // ran off the end
			return 0
		}
		switch state[i] {
		case active:
			failed = true // a loop
			return 0
		case done:
			return memo[i]
		}
		state[i] = active
		reached[i] = true
		in := is[i]
		m := in.mnemonic
		taken := func() int {
			tm := armTarget.FindStringSubmatch(in.operands)
			if tm == nil {
				failed = true
				return 0
			}
			a, _ := strconv.ParseUint(tm[1], 16, 64)
			j, ok := at[a]
			switch {
			case !ok && (a < is[0].addr || a > is[len(is)-1].addr):
				return 1 + m4Refill // tail call out of the function
			case !ok:
				failed = true
				return 0
			}
			return 1 + m4Refill + walk(j)
		}
		var best int
		switch {
		case armBX.MatchString(m):
			best = 1 + m4Refill
			if armCond.MatchString(m) {
				best = max(best, 1+walk(i+1)) // a conditional return, under IT
			}
		case armPop.MatchString(m) && strings.Contains(in.operands, "pc"):
			best = m4Cycles(in)
			if armPop.FindStringSubmatch(m)[2] != "" {
				best = max(best, 1+walk(i+1)) // a conditional return, under IT
			}
		case armLdrPC.MatchString(m) && strings.HasPrefix(in.operands, "pc,"):
			best = m4Cycles(in)
			if armLdrPC.FindStringSubmatch(m)[1] != "" {
				best = max(best, 1+walk(i+1)) // a conditional return, under IT
			}
		case armBranch.MatchString(m) || armCBZ.MatchString(m):
			best = taken()
			if armCond.MatchString(m) || armCBZ.MatchString(m) {
				best = max(best, 1+walk(i+1))
			}
		default:
			best = m4Cycles(in) + walk(i+1)
		}
		state[i], memo[i] = done, best
		return best
	}
	n := walk(0)
	if failed {
		return -1, reached
	}
	return n, reached
}

// The hand-written twins: careful C as a firmware engineer would write
// the same controller by hand, with the same features and the same
// constants (filled in from the generated header), for the Cortex-M4F at
// the same flags. Each checks its inputs for NaN and infinity, holds its
// last command and counts the fault as the generated code does (a feature
// of the generated function, so the twin has it too).
//
// twinBackcalc: float32 PID with setpoint weight (KPB = b·Kp), Tustin
// integrator with a clamp, derivative filtered and on the measurement,
// output clamp, back-calculation from the returned command, and the
// correction for the command a mixer applied.
const twinBackcalc = `#include <stdint.h>

typedef struct {
	float i;      /* integrator */
	float d;      /* filtered derivative */
	float yprev;  /* last measurement */
	float u;      /* last command, as returned or as applied */
	uint32_t bad; /* non-finite inputs */
} twin_pid;

float twin_backcalc_step(twin_pid *c, float r, float y);
void twin_backcalc_applied(twin_pid *c, float a);

float twin_backcalc_step(twin_pid *c, float r, float y)
{
	if (!(r - r + (y - y) >= 0.0f)) {
		if (c->bad != UINT32_MAX) {
			c->bad++;
		}
		return c->u;
	}
	const float e = r - y;
	const float d = AD * c->d + BD * (c->yprev - y);
	const float v = KPB * r - KP * y + c->i + G0 * e + d;
	const float u = v < LO ? LO : (v > HI ? HI : v);
	const float i = c->i + G01 * e + KT * (u - v);
	c->i = i < -IL ? -IL : (i > IL ? IL : i);
	c->d = d;
	c->yprev = y;
	c->u = u;
	return u;
}

void twin_backcalc_applied(twin_pid *c, float a)
{
	if (a - a >= 0.0f) {
		const float i = c->i + KT * (a - c->u);
		c->i = i < -IL ? -IL : (i > IL ? IL : i);
		c->u = a;
	}
}
`

// twinFilt: twinBackcalc behind the four sections of the forms
// airframe's pid_filt axis (a full notch, a second-order lowpass, a
// partial notch, a first-order lowpass), each written as a biquad is
// usually written by hand in transposed direct form II, with the
// filtered measurement feeding the PID.
const twinFilt = `#include <stdint.h>

typedef struct {
	float s[3][2]; /* the second-order sections */
	float s4;      /* the first-order section */
	float i;       /* integrator */
	float d;       /* filtered derivative */
	float yprev;   /* last filtered measurement */
	float u;       /* last command, as returned or as applied */
	uint32_t bad;  /* non-finite inputs */
} twin_pidf;

float twin_filt_step(twin_pidf *c, float r, float y);

float twin_filt_step(twin_pidf *c, float r, float y)
{
	if (!(r - r + (y - y) >= 0.0f)) {
		if (c->bad != UINT32_MAX) {
			c->bad++;
		}
		return c->u;
	}
	float x = y;
	y = F1_B0 * x + c->s[0][0];
	c->s[0][0] = F1_B1 * x - F1_A1 * y + c->s[0][1];
	c->s[0][1] = F1_B2 * x - F1_A2 * y;
	x = y;
	y = F2_B0 * x + c->s[1][0];
	c->s[1][0] = F2_B1 * x - F2_A1 * y + c->s[1][1];
	c->s[1][1] = F2_B2 * x - F2_A2 * y;
	x = y;
	y = F3_B0 * x + c->s[2][0];
	c->s[2][0] = F3_B1 * x - F3_A1 * y + c->s[2][1];
	c->s[2][1] = F3_B2 * x - F3_A2 * y;
	x = y;
	y = F4_B0 * x + c->s4;
	c->s4 = F4_B1 * x - F4_A1 * y;
	const float e = r - y;
	const float d = AD * c->d + BD * (c->yprev - y);
	const float v = KPB * r - KP * y + c->i + G0 * e + d;
	const float u = v < LO ? LO : (v > HI ? HI : v);
	const float i = c->i + G01 * e + KT * (u - v);
	c->i = i < -IL ? -IL : (i > IL ? IL : i);
	c->d = d;
	c->yprev = y;
	c->u = u;
	return u;
}
`

// twinClamp: the same PID with conditional integration instead of
// back-calculation and the derivative on the error, primed at the first
// step after a reset (no kick); the applied command withdraws the last
// increment when the actuator is saturated in the direction the
// integrator moved.
const twinClamp = `#include <stdint.h>

typedef struct {
	float i;        /* integrator */
	float d;        /* filtered derivative */
	float eprev;    /* last error */
	float di;       /* last integrator increment */
	float u;        /* last command, as returned or as applied */
	uint32_t bad;   /* non-finite inputs */
	uint8_t primed; /* eprev holds an error */
} twin_pide;

float twin_clamp_step(twin_pide *c, float r, float y);
void twin_clamp_applied(twin_pide *c, float a);

float twin_clamp_step(twin_pide *c, float r, float y)
{
	if (!(r - r + (y - y) >= 0.0f)) {
		if (c->bad != UINT32_MAX) {
			c->bad++;
		}
		return c->u;
	}
	const float e = r - y;
	if (!c->primed) {
		c->eprev = e;
		c->primed = 1;
	}
	const float d = AD * c->d + BD * (e - c->eprev);
	const float v = KPB * r - KP * y + c->i + G0 * e + d;
	const float u = v < LO ? LO : (v > HI ? HI : v);
	float di = 0.0f;
	if (!((u < v && e > 0.0f) || (u > v && e < 0.0f))) {
		di = G01 * e;
		const float i = c->i + di;
		c->i = i < -IL ? -IL : (i > IL ? IL : i);
	}
	c->di = di;
	c->d = d;
	c->eprev = e;
	c->u = u;
	return u;
}

void twin_clamp_applied(twin_pide *c, float a)
{
	if (a - a >= 0.0f) {
		if ((a < c->u && c->di > 0.0f) || (a > c->u && c->di < 0.0f)) {
			const float i = c->i - c->di;
			c->i = i < -IL ? -IL : (i > IL ? IL : i);
			c->di = 0.0f;
		}
		c->u = a;
	}
}
`

// twinSource is a twin with the constants of the generated axis prefix
// (from its header's #defines) as macros.
func twinSource(t *testing.T, header []byte, prefix, twin string) []byte {
	t.Helper()
	var b bytes.Buffer
	for _, c := range []struct{ twin, gen string }{{"KP", "KP"}, {"KPB", "KPB"}, {"G0", "G0"}, {"G01", "G01"}, {"KT", "KT"}, {"IL", "INTEGRATOR_LIMIT"}, {"AD", "AD"}, {"BD", "BD"}, {"LO", "OUTPUT_LO"}, {"HI", "OUTPUT_HI"}} {
		m := regexp.MustCompile(`(?m)^#define ` + strings.ToUpper(prefix) + "_" + c.gen + ` +(\S+) //`).FindSubmatch(header)
		if m == nil {
			if c.twin == "KT" && !strings.Contains(twin, "KT") {
				continue
			}
			t.Fatalf("the header has no %s_%s", strings.ToUpper(prefix), c.gen)
		}
		fmt.Fprintf(&b, "#define %s %s\n", c.twin, m[1])
	}
	// The filter sections' constants, F<n>_B0 … F<n>_A2, where the axis
	// has them.
	for _, m := range regexp.MustCompile(`(?m)^#define `+strings.ToUpper(prefix)+`_(F\d_[AB]\d) +(\S+) //`).FindAllSubmatch(header, -1) {
		fmt.Fprintf(&b, "#define %s %s\n", m[1], m[2])
	}
	b.WriteString(twin)
	return b.Bytes()
}

// costTarget is a target of the cost table: the Cortex-M4F for float32
// and the fixed-point types (single-precision FPU), the Cortex-M7 with
// its double-precision FPU (FPv5-D16) for float64, which the M4F would
// run in software.
type costTarget struct {
	name   string
	flags  []string
	cycles bool // the Cortex-M4 cycle model applies
}

var m7dp = []string{"-mcpu=cortex-m7", "-mthumb", "-mfloat-abi=hard", "-mfpu=fpv5-d16"}

// TestStepCost counts every generated _step of the forms airframe (every
// form and anti-windup variant, the derivative on the measurement and on
// the error) in every numeric type, built with arm-none-eabi-gcc -std=c99
// -O2 (float32, q15, q31 for the Cortex-M4F, float64 for the Cortex-M7
// with double-precision FPU): all instructions of the function (both
// sides of every branch, literal-pool words not counted), the arithmetic
// ones, and the cycles of the longest path (M4 model). It compares two of
// them with their hand-written twins (twinBackcalc: PID, back-calculation,
// derivative on the measurement; twinClamp: PID, conditional integration,
// derivative on the error) and a third, the PID behind its filter chain,
// with twinFilt: the generated function may take at most 1.1 times the
// twin's instructions and cycles (1.3 with the filters). It also checks that the float
// code has no fused multiply-add and no step divides. The table goes into
// the README (LOCUSMITH_COUNTS=file writes it).
func TestStepCost(t *testing.T) {
	if testing.Short() {
		t.Skip("cross-architecture build and run; skipped with -short")
	}
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	objdump := tool(t, "arm-none-eabi-objdump", "binutils-arm-none-eabi")
	var table, twins bytes.Buffer
	fmt.Fprintf(&table, "| axis | form | anti-windup | numeric | target | instructions | of them arithmetic | cycles, longest path | arithmetic ops of the equations | instructions / ops |\n|---|---|---|---|---|---|---|---|---|---|\n")
	fmt.Fprintf(&twins, "| function | instructions | cycles, longest path | generated / hand-written |\n|---|---|---|---|\n")
	build := func(t *testing.T, target costTarget, name string, src []byte, extra ...emit.Source) map[string]stepSize {
		t.Helper()
		srcs := append([]emit.Source{{Name: name, Data: src}}, extra...)
		dir := writeSources(t, srcs)
		args := append(append(append([]string{}, strictC...), target.flags...), "-O2", "-c", "-o", "x.o", name)
		run(t, dir, cc, args...)
		return stepSizes(run(t, dir, objdump, "-d", "x.o"))
	}
	for _, nt := range []string{"float32", "float64", "q15", "q31"} {
		target := costTarget{"Cortex-M4F", m4f, true}
		if nt == "float64" {
			target = costTarget{"Cortex-M7 (FPv5-D16)", m7dp, false}
		}
		a := formsDesign(t, nt)
		srcs, _, err := emit.GenerateCode(a, emit.CodeOptions{Lang: emit.LangC, AllowUnmet: true})
		if err != nil {
			t.Fatal(err)
		}
		ctrl, _ := cFiles(srcs)
		header := sourceNamed(srcs, headerOf(srcs))
		sizes := build(t, target, ctrl[0], sourceNamed(srcs, ctrl[0]).Data, header)
		for _, x := range a.Axes {
			fn := a.File.Airframe + "_" + x.Name + "_step"
			sz, ok := sizes[fn]
			if !ok {
				t.Errorf("%s not found in the listing", fn)
				continue
			}
			k := x.Design.Coeffs
			ops := emit.StepOps(k, x.Design.Plant.Sections...)
			if sz.arith < ops/2 {
				t.Errorf("%s %s: %d arithmetic instructions for %d operations: the listing parse is wrong", nt, fn, sz.arith, ops)
			}
			if sz.div > 0 {
				t.Errorf("%s %s: %d division instructions: the controller never divides", nt, fn, sz.div)
			}
			if !strings.HasPrefix(nt, "q") && sz.fused > 0 {
				t.Errorf("%s %s: %d fused multiply-add instructions: the float code must round every product", nt, fn, sz.fused)
			}
			if target.cycles && sz.cycles <= 0 {
				t.Errorf("%s %s: no longest path (%d): a loop or an unknown branch", nt, fn, sz.cycles)
			}
			aw := "—"
			if k.Form.HasIntegral() {
				aw = string(k.AntiWindup)
			}
			form := string(k.Form)
			if k.Form.HasDerivative() {
				form += map[bool]string{true: ", derivative on the error", false: ", derivative on the measurement"}[k.DerivativeOnError]
			}
			cyc := "—"
			if target.cycles {
				cyc = strconv.Itoa(sz.cycles)
			}
			fmt.Fprintf(&table, "| %s | %s | %s | %s | %s | %d | %d | %s | %d | %.2f |\n", x.Name, form, aw, nt, target.name, sz.all, sz.arith, cyc, ops, float64(sz.all)/float64(ops))
		}
		if nt != "float32" {
			continue
		}
		// The twins, with the constants of the axes they copy.
		// The targets: at most 1.1 times the hand-written function,
		// and 1.3 times for the PID behind its filter chain, in instructions and in cycles of the longest path.
		for _, tw := range []struct {
			axis, src, fn string
			limit         float64
		}{
			{"pid_back", twinBackcalc, "twin_backcalc_step", 1.1},
			{"pid_err", twinClamp, "twin_clamp_step", 1.1},
			{"pid_filt", twinFilt, "twin_filt_step", 1.3},
		} {
			var k discrete.Coeffs
			var sections int
			for _, x := range a.Axes {
				if x.Name == tw.axis {
					k, sections = x.Design.Coeffs, len(x.Design.Plant.Sections)
				}
			}
			want := map[string]bool{
				"pid_back": k.AntiWindup == discrete.AWBackcalc && !k.DerivativeOnError,
				"pid_err":  k.AntiWindup == discrete.AWClamp && k.DerivativeOnError,
				"pid_filt": k.AntiWindup == discrete.AWBackcalc && !k.DerivativeOnError && sections == 4,
			}[tw.axis]
			if k.Form != airframe.FormPID || !want {
				t.Fatalf("axis %s is not the structure of %s: %+v", tw.axis, tw.fn, k)
			}
			gen := sizes[a.File.Airframe+"_"+tw.axis+"_step"]
			hand := build(t, target, "twin.c", twinSource(t, header.Data, a.File.Airframe+"_"+tw.axis, tw.src))[tw.fn]
			if hand.all == 0 || hand.cycles <= 0 || hand.fused > 0 {
				t.Fatalf("%s: %+v", tw.fn, hand)
			}
			ri, rc := float64(gen.all)/float64(hand.all), float64(gen.cycles)/float64(hand.cycles)
			fmt.Fprintf(&twins, "| `%s_%s_step` | %d | %d | %.2f, %.2f |\n| `%s` (by hand) | %d | %d | |\n",
				a.File.Airframe, tw.axis, gen.all, gen.cycles, ri, rc, tw.fn, hand.all, hand.cycles)
			if ri > tw.limit || rc > tw.limit {
				t.Errorf("%s: %d instructions, %d cycles; the hand-written %s %d and %d: ratios %.3f and %.3f, want ≤ %g",
					tw.axis, gen.all, gen.cycles, tw.fn, hand.all, hand.cycles, ri, rc, tw.limit)
			}
		}
	}
	t.Logf("arm-none-eabi-gcc -std=c99 -O2:\n%s\n%s", table.String(), twins.String())
	if out := os.Getenv("LOCUSMITH_COUNTS"); out != "" {
		if err := os.WriteFile(out, append(append(table.Bytes(), '\n'), twins.Bytes()...), 0o644); err != nil {
			t.Fatal(err)
		}
	}
}

// TestLongestPath checks the cycle count on functions whose paths are
// known: a straight line of one load, one FPU add and a return
// (2 + 1 + 1+P), and a clamp whose longest path takes the branch
// (the count must follow the taken edge and its refill), compiled and
// disassembled, so that a listing the parser misreads shows here.
func TestLongestPath(t *testing.T) {
	t.Parallel()
	cc := tool(t, "arm-none-eabi-gcc", "gcc-arm-none-eabi")
	objdump := tool(t, "arm-none-eabi-objdump", "binutils-arm-none-eabi")
	is := []armInsn{
		{0, "vldr", "s15, [r0]"}, {4, "vadd.f32", "s0, s0, s15"}, {8, "bx", "lr"},
	}
	if got, _ := longestPath(is); got != 2+1+1+m4Refill {
		want := 2 + 1 + 1 + m4Refill
		t.Errorf("straight line: %d cycles, want %d", got, want)
	}
	// A branch over two instructions to a return, or through them.
	is = []armInsn{
		{0, "cmp", "r0, #0"}, {2, "beq.n", "8 <f+0x8>"}, {4, "adds", "r0, #1"}, {6, "adds", "r0, #1"}, {8, "bx", "lr"},
	}
	// Not taken: 1 + 1 + 1 + 1 + 1+P; taken: 1 + 1+P + 1+P.
	if got, _ := longestPath(is); got != max(4+1+m4Refill, 1+(1+m4Refill)+(1+m4Refill)) {
		want := max(4+1+m4Refill, 1+(1+m4Refill)+(1+m4Refill))
		t.Errorf("branch: %d cycles, want %d", got, want)
	}
	// A return by a load into PC, with a rare path after it jumping back.
	ldrpc := []armInsn{{0, "push", "{lr}"}, {2, "cbnz", "r0, 8 <f+0x8>"}, {4, "adds", "r0, #1"}, {6, "ldr.w", "pc, [sp], #4"}, {8, "movs", "r0, #0"}, {10, "b.n", "4 <f+0x4>"}}
	if got, _ := longestPath(ldrpc); got != 2+(1+m4Refill)+1+(1+m4Refill)+1+(2+m4Refill) {
		want := 2 + (1 + m4Refill) + 1 + (1 + m4Refill) + 1 + (2 + m4Refill)
		t.Errorf("ldr pc return: %d cycles, want %d", got, want)
	}
	loop := []armInsn{{0, "subs", "r0, #1"}, {2, "bne.n", "0 <f>"}, {4, "bx", "lr"}}
	if got, _ := longestPath(loop); got != -1 {
		t.Errorf("loop: %d, want -1", got)
	}
	// A rare path placed after the return, jumping back: no loop.
	back := []armInsn{{0, "cmp", "r0, #0"}, {2, "bne.n", "8 <f+0x8>"}, {4, "adds", "r0, #1"}, {6, "bx", "lr"}, {8, "movs", "r0, #0"}, {10, "b.n", "6 <f+0x6>"}}
	if got, _ := longestPath(back); got != 1+(1+m4Refill)+1+(1+m4Refill)+(1+m4Refill) {
		t.Errorf("backward jump: %d cycles, want %d", got, 1+(1+m4Refill)+1+(1+m4Refill)+(1+m4Refill))
	}
	src := emit.Source{Name: "f.c", Data: []byte("float x_step(const float *p, float a);\nfloat x_step(const float *p, float a) { return a + p[0]; }\n")}
	dir := writeSources(t, []emit.Source{src})
	run(t, dir, cc, append(append([]string{}, m4f...), "-std=c99", "-O2", "-c", "-o", "f.o", "f.c")...)
	sz := stepSizes(run(t, dir, objdump, "-d", "f.o"))["x_step"]
	if sz.all != 3 || sz.cycles != 2+1+1+m4Refill {
		var names []string
		for n := range armListing(run(t, dir, objdump, "-d", "f.o")) {
			names = append(names, n)
		}
		sort.Strings(names)
		t.Errorf("compiled a + p[0]: %+v, want 3 instructions and %d cycles (functions %v)", sz, 2+1+1+m4Refill, names)
	}
}
