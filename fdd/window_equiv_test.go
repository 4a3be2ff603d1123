package fdd

import (
	"encoding/binary"
	"math"
	"math/rand/v2"
	"testing"
	"unsafe"
)

// The window forms: the Go form (pushWindowsGo, steadinessGo), the form the
// engine runs (pushWindowsAsm, steadinessAsm: assembly on amd64, the Go form
// elsewhere) and the per-channel layout the windows had before the sums were
// laid out by sum (refWindow4 below, kept as the oracle). All three must hold
// the same sums bit for bit after every push and decide steadiness alike.

// refChan and refWindow4 are the per-channel window4 (each channel's three
// sums together) with its push, rebuild and full-window checks, as they were
// before the structure-of-arrays layout (products rounded on their own, as
// on amd64 without FMA).
type refChan struct{ sum, sumSq, sumJ float64 }

type refWindow4 struct {
	n, count, head, pushes int
	ch                     [nCh]refChan
	k                      slopeConst
	ring                   [][nCh]float64
}

func newRefWindow4(n int) *refWindow4 {
	return &refWindow4{n: n, k: newSlopeConst(n), ring: make([][nCh]float64, n)}
}

func (w *refWindow4) reset() {
	if w.count == 0 && w.head == 0 {
		return
	}
	w.count, w.head = 0, 0
	w.ch = [nCh]refChan{}
}

func (w *refWindow4) push4(u, v, sat, hw float64) {
	x := [nCh]float64{chValve: u, chAir: v, chSAT: sat, chHW: hw}
	slot := &w.ring[w.head]
	if w.count < w.n {
		j := float64(w.count)
		for k := range x {
			c := &w.ch[k]
			c.sumJ += float64(j * x[k])
			c.sum += x[k]
			c.sumSq += float64(x[k] * x[k])
		}
		w.count++
	} else {
		n1 := float64(w.n - 1)
		for k := range x {
			c, old := &w.ch[k], slot[k]
			c.sumJ = c.sumJ - (c.sum - old) + float64(n1*x[k])
			c.sum += x[k] - old
			c.sumSq += float64(x[k]*x[k]) - float64(old*old)
		}
		w.pushes++
	}
	*slot = x
	w.head++
	if w.head == w.n {
		w.head = 0
	}
	if w.pushes >= rebuildEvery {
		w.pushes = 0
		w.ch = [nCh]refChan{}
		start := w.head - w.count
		if start < 0 {
			start += w.n
		}
		for j := 0; j < w.count; j++ {
			i := (start + j) % w.n
			for k := range nCh {
				c, v := &w.ch[k], w.ring[i][k]
				c.sum += v
				c.sumSq += float64(v * v)
				c.sumJ += float64(float64(j) * v)
			}
		}
	}
}

func (w *refWindow4) slope(k int) float64 {
	c := &w.ch[k]
	return (float64(w.k.n*c.sumJ) - float64(w.k.sj*c.sum)) * w.k.invDen
}

func (w *refWindow4) variance(k int) float64 {
	c := &w.ch[k]
	v := (c.sumSq - float64(c.sum*c.sum*w.k.invN)) * w.k.invN
	if v < 0 {
		return 0
	}
	return v
}

// refSteadiness is the steady check as it was (short-circuit order kept).
func refSteadiness(w *refWindow4, d *window, en *Engine) (datSteady, steady bool) {
	datSteady = d.full() && math.Abs(d.fullSlope()) <= en.tempSlope && d.variance() <= en.tempVar
	if !datSteady || w.count != w.n {
		return datSteady, false
	}
	c, span := &en.cfg, float64(w.n-1)
	if math.Abs(w.slope(chValve))*span > c.SteadyValveSpan || w.variance(chValve) > en.valveVar {
		return true, false
	}
	fa := c.SteadyAirflowFrac * (w.ch[chAir].sum * w.k.invN)
	if w.variance(chAir) > float64(fa*fa)+1e-6 || math.Abs(w.slope(chAir))*span > float64(2*fa)+1e-3 {
		return true, false
	}
	if math.Abs(w.slope(chSAT)) > en.tempSlope || w.variance(chSAT) > en.tempVar {
		return true, false
	}
	return true, math.Abs(w.slope(chHW)) <= en.hwSlope
}

// windowForms runs the three forms side by side.
type windowForms struct {
	ref   *refWindow4
	refD  window
	g     window4
	gD    window
	a     *termState // the engine form works on a termState's in and dat
	steps int
	// Outcomes seen (so a test can check that its inputs reach both sides
	// of every decision).
	datSteady, steady, unsteady int
}

func newWindowForms(nIn, nDAT int, en *Engine) *windowForms {
	f := &windowForms{ref: newRefWindow4(nIn), a: new(termState)}
	f.refD.init(nDAT)
	f.g.initRing(make([][nCh]float64, nIn), en.steadyLimits())
	f.gD.init(nDAT)
	f.a.in.initRing(make([][nCh]float64, nIn), en.steadyLimits())
	f.a.dat.init(nDAT)
	return f
}

func (f *windowForms) reset() {
	f.ref.reset()
	f.refD.reset()
	f.g.reset()
	f.gD.reset()
	f.a.resetWindows()
}

// sameBits: equal bits, or both NaN (a NaN's payload may depend on operand
// order, which the forms need not share).
func sameBits(a, b float64) bool {
	return math.Float64bits(a) == math.Float64bits(b) || (a != a && b != b)
}

func (f *windowForms) push(t testing.TB, in *inputs, en *Engine) {
	t.Helper()
	f.steps++
	f.ref.push4(in.u, in.v, in.sat, in.hw)
	f.refD.push(in.dat)
	pushWindowsGo(&f.g, &f.gD, in)
	pushWindowsAsm(f.a, in)
	for k := range nCh {
		r := f.ref.ch[k]
		for _, w := range []*window4{&f.g, &f.a.in} {
			if !sameBits(w.sum[k], r.sum) || !sameBits(w.sumSq[k], r.sumSq) || !sameBits(w.sumJ[k], r.sumJ) {
				t.Fatalf("push %d channel %d: sums %v %v %v, per-channel form %v %v %v (go form %v)", f.steps, k,
					w.sum[k], w.sumSq[k], w.sumJ[k], r.sum, r.sumSq, r.sumJ, w == &f.g)
			}
		}
	}
	for _, w := range []*window4{&f.g, &f.a.in} {
		if w.count != f.ref.count || w.head != f.ref.head || w.pushes != f.ref.pushes {
			t.Fatalf("push %d: count/head/pushes %d/%d/%d, per-channel form %d/%d/%d (go form %v)", f.steps,
				w.count, w.head, w.pushes, f.ref.count, f.ref.head, f.ref.pushes, w == &f.g)
		}
		for i := range w.ring {
			for k := range nCh {
				if !sameBits(w.ring[i][k], f.ref.ring[i][k]) {
					t.Fatalf("push %d: ring[%d][%d] %v, per-channel form %v", f.steps, i, k, w.ring[i][k], f.ref.ring[i][k])
				}
			}
		}
	}
	for _, d := range []*window{&f.gD, &f.a.dat} {
		r := &f.refD
		if !sameBits(d.sum, r.sum) || !sameBits(d.sumSq, r.sumSq) || !sameBits(d.sumJ, r.sumJ) ||
			d.count != r.count || d.head != r.head || d.pushes != r.pushes {
			t.Fatalf("push %d: DAT window %v %v %v %d/%d/%d, reference %v %v %v %d/%d/%d", f.steps,
				d.sum, d.sumSq, d.sumJ, d.count, d.head, d.pushes, r.sum, r.sumSq, r.sumJ, r.count, r.head, r.pushes)
		}
		for i := range d.ring {
			if !sameBits(d.ring[i], r.ring[i]) {
				t.Fatalf("push %d: DAT ring[%d] %v, reference %v", f.steps, i, d.ring[i], r.ring[i])
			}
		}
	}
	rd, rs := refSteadiness(f.ref, &f.refD, en)
	gd, gs := f.g.datSteady, f.g.steady
	ad, as := en.steadiness(f.a)
	if gd != rd || gs != rs || ad != rd || as != rs {
		t.Fatalf("push %d: steadiness (DAT, all) go form %v %v, engine form %v %v, per-channel form %v %v (limits %+v)",
			f.steps, gd, gs, ad, as, rd, rs, limitsOf(en))
	}
	switch {
	case rs:
		f.steady++
	case rd:
		f.datSteady++
	default:
		f.unsteady++
	}
}

func limitsOf(en *Engine) [6]float64 {
	return [6]float64{en.tempSlope, en.tempVar, en.valveVar, en.hwSlope, en.cfg.SteadyValveSpan, en.cfg.SteadyAirflowFrac}
}

// testLimits are the engine's steady limits at the default configuration.
func testLimits(t testing.TB) *Engine {
	t.Helper()
	c, err := Config{}.withDefaults()
	if err != nil {
		t.Fatal(err)
	}
	en := &Engine{cfg: c}
	min := c.Step.Minutes()
	en.tempSlope = c.SteadyTempSlopeKMin * min
	en.tempVar = c.SteadyTempStdK * c.SteadyTempStdK
	en.valveVar = sq(c.SteadyValveSpan / 2)
	en.hwSlope = c.SteadyHWSlopeKMin * min
	return en
}

// TestWindowForms drives the three forms with every window length 2..32
// (inputs and DAT independently) through steady and drifting periods,
// resets, constant values, steps, large and tiny magnitudes and more than
// rebuildEvery full-window pushes between resets.
func TestWindowForms(t *testing.T) {
	en := testLimits(t)
	rng := rand.New(rand.NewPCG(11, 5))
	var total windowForms
	for nIn := 2; nIn <= maxWindow; nIn++ {
		for _, nDAT := range []int{2, max(nIn/2, 2), nIn, 1 + rng.IntN(maxWindow)} {
			f := newWindowForms(nIn, nDAT, en)
			var in inputs
			level := [5]float64{0.4, 0.3, 13, 70, 25} // u, v, sat, hw, dat
			noise := 0.0
			for i := range 1500 {
				if i%300 == 0 || rng.IntN(400) == 0 {
					f.reset()
					noise = []float64{0, 1e-4, 1e-3, 0.02, 0.3, 5}[rng.IntN(6)]
				}
				if rng.IntN(150) == 0 { // a step in one input
					level[rng.IntN(5)] *= 1 + rng.NormFloat64()*0.2
				}
				x := level
				for k := range x {
					x[k] += noise * rng.NormFloat64() * math.Max(1e-3, math.Abs(level[k])) * 0.05
				}
				switch r := rng.IntN(1000); {
				case r == 0: // magnitudes whose squares overflow or lose everything
					x[rng.IntN(5)] = []float64{1e200, -1e200, 1e-310, -5e-324, math.MaxFloat64, math.Copysign(0, -1)}[rng.IntN(6)]
				case r < 4:
					x[rng.IntN(5)] = 1e9 * rng.NormFloat64()
				}
				in.u, in.v, in.sat, in.hw, in.dat = x[0], x[1], x[2], x[3], x[4]
				f.push(t, &in, en)
			}
			total.steady += f.steady
			total.datSteady += f.datSteady
			total.unsteady += f.unsteady
		}
	}
	if total.steady == 0 || total.datSteady == 0 || total.unsteady == 0 {
		t.Errorf("outcomes steady %d, DAT only %d, unsteady %d: every one must occur", total.steady, total.datSteady, total.unsteady)
	}
}

// TestWindowFormsLimits: limits at 0, NaN, +Inf and negative, and inputs
// exactly at a limit, decide alike in every form.
func TestWindowFormsLimits(t *testing.T) {
	base := testLimits(t)
	specials := []float64{0, math.NaN(), math.Inf(1), -1e-9, 1e-12}
	rng := rand.New(rand.NewPCG(2, 9))
	for trial := range 400 {
		en := *base
		lim := []*float64{&en.tempSlope, &en.tempVar, &en.valveVar, &en.hwSlope, &en.cfg.SteadyValveSpan, &en.cfg.SteadyAirflowFrac}
		for _, p := range lim {
			if rng.IntN(3) == 0 {
				*p = specials[rng.IntN(len(specials))]
			}
		}
		n := 4 + trial%29
		f := newWindowForms(n, max(n/2, 2), &en)
		var in inputs
		for i := range 3 * n {
			// Constant, then a ramp of exactly the slope limit, then one
			// out-of-line sample.
			in.u, in.v, in.sat, in.hw, in.dat = 0.5, 0.25, 13, 70, 30
			if i >= n {
				in.sat += base.tempSlope * float64(i)
				in.hw -= base.hwSlope * float64(i)
				in.dat += base.tempSlope * float64(i)
				in.u += base.cfg.SteadyValveSpan / float64(n-1) * float64(i)
			}
			if i == 2*n {
				in.v *= 3
			}
			f.push(t, &in, &en)
		}
	}
}

// FuzzWindowForms: the forms agree on any sequence. The input is a header
// (window lengths, limit and scale choices) and then one byte per step:
// 0xFF resets, 0xFE pushes five raw float64 from the next 40 bytes, any
// other byte pushes values picked from a table by its bits.
func FuzzWindowForms(f *testing.F) {
	f.Add([]byte{14, 6, 0, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10})
	f.Add([]byte{2, 2, 0xFF, 0xFF, 0, 0, 0, 0, 0xFF, 0, 0})
	f.Add(append([]byte{30, 15, 1, 7}, make([]byte, 320)...))
	f.Fuzz(func(t *testing.T, data []byte) {
		if len(data) < 4 {
			return
		}
		nIn, nDAT := 2+int(data[0])%(maxWindow-1), 2+int(data[1])%(maxWindow-1)
		en := testLimits(t)
		specials := []float64{0, math.NaN(), math.Inf(1), 1e-12, 1e12, -1}
		lim := []*float64{&en.tempSlope, &en.tempVar, &en.valveVar, &en.hwSlope, &en.cfg.SteadyValveSpan, &en.cfg.SteadyAirflowFrac}
		for k, p := range lim {
			if data[2]>>k&1 == 1 {
				*p = specials[(int(data[2])+k)%len(specials)]
			}
		}
		table := []float64{0, 1, -1, 0.5, 13, 70, 1e-3, 2.5e-3, 1e150, -1e155, 1e-300, 5e-324,
			math.Copysign(0, -1), 0.1, 0.2, 0.3, 1, 1, 1, 1, 42, 42, 42, 42, 7e7, -7e7, 3, 4, 12.999, 13.001, 0.04, 0.05}
		scale := math.Ldexp(1, int(data[3]%64)-32)
		fm := newWindowForms(nIn, nDAT, en)
		var in inputs
		for i := 4; i < len(data); i++ {
			b := data[i]
			var x [5]float64
			switch {
			case b == 0xFF:
				fm.reset()
				continue
			case b == 0xFE && i+40 < len(data):
				for k := range x {
					x[k] = math.Float64frombits(binary.LittleEndian.Uint64(data[i+1+8*k:]))
				}
				i += 40
			default:
				for k := range x {
					x[k] = table[(int(b)+7*k+int(b>>5)*k)%len(table)] * scale
				}
			}
			in.u, in.v, in.sat, in.hw, in.dat = x[0], x[1], x[2], x[3], x[4]
			fm.push(t, &in, en)
		}
	})
}

// TestWindowAsmPresent documents which form the engine runs here, and
// checks the layout the assembly relies on: steadyLimits.hwSlope right
// after tempSlope (one packed load).
func TestWindowAsmPresent(t *testing.T) {
	t.Logf("assembly windows: %v", haveWindowAsm)
	var l steadyLimits
	if d := unsafe.Offsetof(l.hwSlope) - unsafe.Offsetof(l.tempSlope); d != 8 {
		t.Errorf("steadyLimits.hwSlope is %d bytes after tempSlope, want 8", d)
	}
}

// TestSteadinessAfterReset: a reset clears the steady checks, as the
// first push after it would find them.
func TestSteadinessAfterReset(t *testing.T) {
	en := testLimits(t)
	st := new(termState)
	st.in.initRing(make([][nCh]float64, 8), en.steadyLimits())
	st.dat.init(4)
	in := inputs{u: 0.5, v: 0.3, sat: 13, hw: 70, dat: 25}
	for range 8 {
		st.pushWindows(&in)
	}
	if d, s := en.steadiness(st); !d || !s {
		t.Fatalf("constant inputs over a full window: steadiness %v %v, want true true", d, s)
	}
	st.resetWindows()
	if d, s := en.steadiness(st); d || s {
		t.Errorf("after a reset: steadiness %v %v, want false false", d, s)
	}
}
