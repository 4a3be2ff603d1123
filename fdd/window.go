package fdd

import "math"

// maxWindow is the longest sliding window (steps).
const maxWindow = 32

// window is a fixed-capacity sliding window over equally spaced samples with
// running sums, so the mean, variance and least-squares slope cost O(1) per
// sample. The sums are recomputed from the ring every rebuildEvery pushes so
// rounding does not accumulate.
type window struct {
	n      int // window length
	count  int // samples held (≤ n)
	head   int // index of the next write
	pushes int
	sum    float64     // Σ x_j
	sumSq  float64     // Σ x_j²
	sumJ   float64     // Σ j·x_j, j = 0 for the oldest sample
	fullK  *slopeConst // constants of a full window (the engine's windows share one)
	ring   []float64   // n samples; the engine's windows share one array
}

// slopeConst holds the constants of a full window of n: Σj = n(n−1)/2, the
// slope denominator n·Σj² − (Σj)², and the reciprocals of n and of the
// denominator (the steady checks on every sample multiply, not divide), and
// n−1 (the weight of the newest sample in the sliding Σj·x).
type slopeConst struct{ n, sj, den, invN, invDen, n1 float64 }

func newSlopeConst(n int) slopeConst {
	c := float64(n)
	sj := c * (c - 1) / 2
	sjj := (c - 1) * c * (2*c - 1) / 6
	den := c*sjj - sj*sj
	return slopeConst{n: c, sj: sj, den: den, invN: 1 / c, invDen: 1 / den, n1: float64(n - 1)}
}

const rebuildEvery = 256

func (w *window) init(n int) { w.initRing(make([]float64, n)) }

// initRing sets up a window over ring (its length is the window length).
func (w *window) initRing(ring []float64) {
	k := newSlopeConst(len(ring))
	w.initShared(ring, &k)
}

// initShared is initRing with the full-window constants k (of len(ring)),
// which windows of one length share: a constant read on every sample then
// stays in cache instead of taking a line of each terminal's state.
func (w *window) initShared(ring []float64, k *slopeConst) {
	*w = window{n: len(ring), fullK: k, ring: ring}
}

// reset empties the window (after a gap or a gated sample).
func (w *window) reset() {
	if w.count == 0 && w.head == 0 {
		return
	}
	w.count, w.head, w.sum, w.sumSq, w.sumJ = 0, 0, 0, 0, 0
}

// full reports whether the window holds n samples.
func (w *window) full() bool { return w.count == w.n }

// push appends x, dropping the oldest sample when full.
//
// Sliding update of Σ j·x_j: removing x_0 and renumbering gives
// S' = S − (T − x_0) + (n−1)·x_new, with T = Σ x_j before the update.
func (w *window) push(x float64) {
	if w.count < w.n {
		w.sumJ += float64(float64(w.count) * x)
		w.sum += x
		w.sumSq += float64(x * x)
		w.ring[w.head] = x
		w.head++
		if w.head == w.n {
			w.head = 0
		}
		w.count++
		return
	}
	old := w.ring[w.head]
	w.sumJ = w.sumJ - (w.sum - old) + float64(w.fullK.n1*x)
	w.sum += x - old
	w.sumSq += float64(x*x) - float64(old*old)
	w.ring[w.head] = x
	w.head++
	if w.head == w.n {
		w.head = 0
	}
	w.pushes++
	if w.pushes >= rebuildEvery {
		w.rebuild()
	}
}

// rebuild recomputes the running sums from the ring.
func (w *window) rebuild() {
	w.pushes = 0
	w.sum, w.sumSq, w.sumJ = 0, 0, 0
	start := w.head - w.count
	if start < 0 {
		start += w.n
	}
	for j := 0; j < w.count; j++ {
		k := start + j
		if k >= w.n {
			k -= w.n
		}
		x := w.ring[k]
		w.sum += x
		w.sumSq += float64(x * x)
		w.sumJ += float64(float64(j) * x)
	}
}

// mean of the samples held.
func (w *window) mean() float64 {
	if w.count == w.n {
		return w.sum * w.fullK.invN
	}
	if w.count == 0 {
		return 0
	}
	return w.sum / float64(w.count)
}

// variance (population) of the samples held, clamped at 0.
func (w *window) variance() float64 {
	var v float64
	switch {
	case w.count == w.n:
		k := w.fullK
		v = (w.sumSq - float64(w.sum*w.sum*k.invN)) * k.invN
	case w.count < 2:
		return 0
	default:
		c := float64(w.count)
		v = (w.sumSq - w.sum*w.sum/c) / c
	}
	if v < 0 {
		return 0
	}
	return v
}

// slope is the ordinary least-squares slope per step over the samples held:
// b = (c·Σjx − Σj·Σx) / (c·Σj² − (Σj)²), j = 0..c−1.
func (w *window) slope() float64 {
	if w.count == w.n {
		return w.fullSlope()
	}
	if w.count < 2 {
		return 0
	}
	c := float64(w.count)
	sj := c * (c - 1) / 2
	sjj := (c - 1) * c * (2*c - 1) / 6
	return (c*w.sumJ - sj*w.sum) / (c*sjj - sj*sj)
}

// fullSlope is slope for a full window (the caller checked full).
func (w *window) fullSlope() float64 {
	k := w.fullK
	return (float64(k.n*w.sumJ) - float64(k.sj*w.sum)) * k.invDen
}

// ago returns the sample k steps before the most recent (k < count).
func (w *window) ago(k int) float64 {
	i := w.head - 1 - k
	for i < 0 {
		i += w.n
	}
	return w.ring[i]
}

// Channels of the input window (valve, airflow, SAT, HW temperature).
const (
	chValve = iota
	chAir
	chSAT
	chHW
	nCh
)

// window4 is four sliding windows of the same length that are always pushed
// and reset together (the steady-state inputs), with shared indexing so one
// push costs one ring update. Same sums and formulas as window, laid out by
// sum (structure of arrays): the assembly form (window_amd64.s) updates two
// channels per SSE2 instruction, valve and airflow in one register, SAT and
// HW temperature in the other.
type window4 struct {
	sum    [nCh]float64   // Σ x_j per channel
	sumSq  [nCh]float64   // Σ x_j²
	sumJ   [nCh]float64   // Σ j·x_j, j = 0 for the oldest sample
	fullK  *slopeConst2   // constants of a full window (shared, as for window)
	lim    *steadyLimits  // the engine's steady-state limits (shared)
	ring   [][nCh]float64 // n samples; the engine's windows share one array
	n      int
	count  int
	head   int
	pushes int

	// The steady checks on the windows after the last push (pushWindows
	// makes them while the sums are at hand; steadiness returns them).
	datSteady, steady bool
}

// steadyLimits are the engine's steady-state limits, shared by every
// terminal's window4 (NewEngine sets them once, before the terminals). tempSlope and hwSlope are adjacent: the assembly loads them
// as one pair (SAT, HW).
type steadyLimits struct {
	tempSlope, hwSlope float64 // |slope| limits of DAT and SAT, HW temperature, K per step
	tempVar, valveVar  float64 // variance limits of DAT and SAT (K²), valve
	span, airFrac      float64 // Config.SteadyValveSpan, Config.SteadyAirflowFrac
}

// steadyLimits returns the engine's steady-state limits for initRing.
func (en *Engine) steadyLimits() steadyLimits {
	return steadyLimits{
		tempSlope: en.tempSlope, hwSlope: en.hwSlope, tempVar: en.tempVar, valveVar: en.valveVar,
		span: en.cfg.SteadyValveSpan, airFrac: en.cfg.SteadyAirflowFrac,
	}
}

// slopeConst2 is slopeConst of a full window4 with every constant held
// twice (both lanes of a packed operand), plus n−1 (the weight of the
// newest sample in the sliding Σj·x, and the valve and airflow spans).
type slopeConst2 struct{ n, sj, invN, invDen, n1 [2]float64 }

func newSlopeConst2(n int) slopeConst2 {
	k := newSlopeConst(n)
	return slopeConst2{
		n: [2]float64{k.n, k.n}, sj: [2]float64{k.sj, k.sj}, invN: [2]float64{k.invN, k.invN},
		invDen: [2]float64{k.invDen, k.invDen}, n1: [2]float64{k.n1, k.n1},
	}
}

func (w *window4) init(n int) { w.initRing(make([][nCh]float64, n), steadyLimits{}) }

// initRing sets up a window over ring (its length is the window length)
// with the steady limits lim.
func (w *window4) initRing(ring [][nCh]float64, lim steadyLimits) {
	k := newSlopeConst2(len(ring))
	w.initShared(ring, &k, &lim)
}

// initShared is initRing with shared full-window constants k (of
// len(ring)) and limits lim (see window.initShared).
func (w *window4) initShared(ring [][nCh]float64, k *slopeConst2, lim *steadyLimits) {
	*w = window4{n: len(ring), fullK: k, lim: lim, ring: ring}
}

func (w *window4) reset() {
	if w.count == 0 && w.head == 0 {
		return
	}
	w.count, w.head = 0, 0
	w.sum, w.sumSq, w.sumJ = [nCh]float64{}, [nCh]float64{}, [nCh]float64{}
	w.datSteady, w.steady = false, false
}

func (w *window4) full() bool { return w.count == w.n }

// push appends one sample per channel.
func (w *window4) push(x [nCh]float64) { w.push4(x[chValve], x[chAir], x[chSAT], x[chHW]) }

// push4 appends valve, airflow, SAT and HW temperature: window.push per
// channel. The conversions float64(a·b) keep each product rounded on its
// own (no fused multiply-add on any architecture), as the assembly does.
func (w *window4) push4(u, v, sat, hw float64) {
	x := [nCh]float64{chValve: u, chAir: v, chSAT: sat, chHW: hw}
	slot := &w.ring[w.head]
	if w.count < w.n {
		j := float64(w.count)
		for k := range x {
			w.sumJ[k] += float64(j * x[k])
			w.sum[k] += x[k]
			w.sumSq[k] += float64(x[k] * x[k])
		}
		w.count++
	} else {
		n1 := w.fullK.n1[0]
		for k := range x {
			old := slot[k]
			w.sumJ[k] = w.sumJ[k] - (w.sum[k] - old) + float64(n1*x[k])
			w.sum[k] += x[k] - old
			w.sumSq[k] += float64(x[k]*x[k]) - float64(old*old)
		}
		w.pushes++
	}
	*slot = x
	w.head++
	if w.head == w.n {
		w.head = 0
	}
	if w.pushes >= rebuildEvery {
		w.rebuild()
	}
}

func (w *window4) rebuild() {
	w.pushes = 0
	w.sum, w.sumSq, w.sumJ = [nCh]float64{}, [nCh]float64{}, [nCh]float64{}
	start := w.head - w.count
	if start < 0 {
		start += w.n
	}
	for j := 0; j < w.count; j++ {
		i := start + j
		if i >= w.n {
			i -= w.n
		}
		for k := 0; k < nCh; k++ {
			v := w.ring[i][k]
			w.sum[k] += v
			w.sumSq[k] += float64(v * v)
			w.sumJ[k] += float64(float64(j) * v)
		}
	}
}

func (w *window4) mean(k int) float64 {
	if w.count == w.n {
		return w.sum[k] * w.fullK.invN[0]
	}
	if w.count == 0 {
		return 0
	}
	return w.sum[k] / float64(w.count)
}

// fullSlope and fullVariance are slope and variance of channel k of a full
// window (the caller checked full).
func (w *window4) fullSlope(k int) float64 {
	c := w.fullK
	return (float64(c.n[0]*w.sumJ[k]) - float64(c.sj[0]*w.sum[k])) * c.invDen[0]
}

func (w *window4) fullVariance(k int) float64 {
	c := w.fullK
	v := (w.sumSq[k] - float64(w.sum[k]*w.sum[k]*c.invN[0])) * c.invN[0]
	if v < 0 {
		return 0
	}
	return v
}

func (w *window4) variance(k int) float64 {
	switch {
	case w.count == w.n:
		return w.fullVariance(k)
	case w.count < 2:
		return 0
	}
	n := float64(w.count)
	v := (w.sumSq[k] - w.sum[k]*w.sum[k]/n) / n
	if v < 0 {
		return 0
	}
	return v
}

func (w *window4) slope(k int) float64 {
	if w.count == w.n {
		return w.fullSlope(k)
	}
	if w.count < 2 {
		return 0
	}
	n := float64(w.count)
	sj := n * (n - 1) / 2
	sjj := (n - 1) * n * (2*n - 1) / 6
	return (n*w.sumJ[k] - sj*w.sum[k]) / (n*sjj - sj*sj)
}

// pushWindowsGo is pushWindows in Go: valve, airflow, SAT and HW
// temperature into the full window, the DAT into the last half window, then
// the steady checks (steadyGo) into w.datSteady and w.steady. It is the
// reference of the assembly form and what other architectures (and -tags
// purego) run.
func pushWindowsGo(w *window4, d *window, in *inputs) {
	w.push4(in.u, in.v, in.sat, in.hw)
	d.push(in.dat)
	w.datSteady, w.steady = steadyGo(w, d, w.lim)
}

// steadiness reports whether the DAT was steady over its window at the last
// pushWindows (full, |slope| and variance within the limits) and whether the
// whole sample was (the DAT and every input; steadyGo).
func (en *Engine) steadiness(st *termState) (datSteady, steady bool) {
	return st.in.datSteady, st.in.steady
}

// steadyGo: the DAT is steady when its window is full, |slope| ≤ tempSlope
// and variance ≤ tempVar; the sample is steady when the DAT is and every
// input is (inputsSteadyGo).
func steadyGo(w *window4, d *window, lim *steadyLimits) (datSteady, steady bool) {
	datSteady = d.full() && math.Abs(d.fullSlope()) <= lim.tempSlope && d.variance() <= lim.tempVar
	return datSteady, datSteady && inputsSteadyGo(w, lim)
}

// inputsSteadyGo checks the full-window steadiness of valve (travel
// |slope|·(n−1) and variance), airflow (variance and travel against the
// relative limit on its mean), SAT (|slope|, variance) and HW temperature
// (|slope|).
func inputsSteadyGo(w *window4, lim *steadyLimits) bool {
	if !w.full() {
		return false
	}
	span := w.fullK.n1[0]
	if math.Abs(w.fullSlope(chValve))*span > lim.span || w.fullVariance(chValve) > lim.valveVar {
		return false
	}
	fa := lim.airFrac * (w.sum[chAir] * w.fullK.invN[0])
	if w.fullVariance(chAir) > float64(fa*fa)+1e-6 || math.Abs(w.fullSlope(chAir))*span > float64(2*fa)+1e-3 {
		return false
	}
	if math.Abs(w.fullSlope(chSAT)) > lim.tempSlope || w.fullVariance(chSAT) > lim.tempVar {
		return false
	}
	return math.Abs(w.fullSlope(chHW)) <= lim.hwSlope
}
