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
	sum    float64 // Σ x_j
	sumSq  float64 // Σ x_j²
	sumJ   float64 // Σ j·x_j, j = 0 for the oldest sample
	fullK  slopeConst
	ring   []float64 // n samples; the engine's windows share one array
}

// slopeConst holds the constants of a full window of n: Σj = n(n−1)/2, the
// slope denominator n·Σj² − (Σj)², and the reciprocals of n and of the
// denominator (the steady checks on every sample multiply, not divide).
type slopeConst struct{ n, sj, den, invN, invDen float64 }

func newSlopeConst(n int) slopeConst {
	c := float64(n)
	sj := c * (c - 1) / 2
	sjj := (c - 1) * c * (2*c - 1) / 6
	den := c*sjj - sj*sj
	return slopeConst{n: c, sj: sj, den: den, invN: 1 / c, invDen: 1 / den}
}

const rebuildEvery = 256

func (w *window) init(n int) { w.initRing(make([]float64, n)) }

// initRing sets up a window over ring (its length is the window length).
func (w *window) initRing(ring []float64) {
	*w = window{n: len(ring), fullK: newSlopeConst(len(ring)), ring: ring}
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
		w.sumJ += float64(w.count) * x
		w.sum += x
		w.sumSq += x * x
		w.ring[w.head] = x
		w.head++
		if w.head == w.n {
			w.head = 0
		}
		w.count++
		return
	}
	old := w.ring[w.head]
	w.sumJ = w.sumJ - (w.sum - old) + float64(w.n-1)*x
	w.sum += x - old
	w.sumSq += x*x - old*old
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
		w.sumSq += x * x
		w.sumJ += float64(j) * x
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
		k := &w.fullK
		v = (w.sumSq - w.sum*w.sum*k.invN) * k.invN
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
		k := &w.fullK
		return (k.n*w.sumJ - k.sj*w.sum) * k.invDen
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
	k := &w.fullK
	return (k.n*w.sumJ - k.sj*w.sum) * k.invDen
}

// last returns the most recent sample.
func (w *window) last() float64 {
	i := w.head - 1
	if i < 0 {
		i += w.n
	}
	return w.ring[i]
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
// push costs one ring update. Same sums and formulas as window; each
// channel's three sums sit together.
type window4 struct {
	n      int
	count  int
	head   int
	pushes int
	ch     [nCh]chanSums
	fullK  slopeConst
	ring   [][nCh]float64 // n samples; the engine's windows share one array
}

// chanSums are one channel's running sums Σx, Σx², Σj·x.
type chanSums struct{ sum, sumSq, sumJ float64 }

// fill adds x as sample j of a window that is not full yet.
func (c *chanSums) fill(x, j float64) {
	c.sumJ += j * x
	c.sum += x
	c.sumSq += x * x
}

// slide replaces the oldest sample old by x in a full window of n1+1
// (see window.push for the sliding Σj·x).
func (c *chanSums) slide(x, old, n1 float64) {
	c.sumJ = c.sumJ - (c.sum - old) + n1*x
	c.sum += x - old
	c.sumSq += x*x - old*old
}

// slope and variance of a full window from its sums (the full-window
// branches of window4.slope and window4.variance).
func (k *slopeConst) slope(c *chanSums) float64 { return (k.n*c.sumJ - k.sj*c.sum) * k.invDen }

func (k *slopeConst) variance(c *chanSums) float64 {
	v := (c.sumSq - c.sum*c.sum*k.invN) * k.invN
	if v < 0 {
		return 0
	}
	return v
}

func (w *window4) init(n int) { w.initRing(make([][nCh]float64, n)) }

// initRing sets up a window over ring (its length is the window length).
func (w *window4) initRing(ring [][nCh]float64) {
	*w = window4{n: len(ring), fullK: newSlopeConst(len(ring)), ring: ring}
}

func (w *window4) reset() {
	if w.count == 0 && w.head == 0 {
		return
	}
	w.count, w.head = 0, 0
	w.ch = [nCh]chanSums{}
}

func (w *window4) full() bool { return w.count == w.n }

// push appends one sample per channel.
func (w *window4) push(x [nCh]float64) { w.push4(x[chValve], x[chAir], x[chSAT], x[chHW]) }

// push4 appends valve, airflow, SAT and HW temperature.
func (w *window4) push4(u, v, sat, hw float64) {
	slot := &w.ring[w.head]
	if w.count < w.n {
		c := float64(w.count)
		w.ch[chValve].fill(u, c)
		w.ch[chAir].fill(v, c)
		w.ch[chSAT].fill(sat, c)
		w.ch[chHW].fill(hw, c)
		w.count++
	} else {
		n1 := float64(w.n - 1)
		w.ch[chValve].slide(u, slot[chValve], n1)
		w.ch[chAir].slide(v, slot[chAir], n1)
		w.ch[chSAT].slide(sat, slot[chSAT], n1)
		w.ch[chHW].slide(hw, slot[chHW], n1)
		w.pushes++
	}
	*slot = [nCh]float64{chValve: u, chAir: v, chSAT: sat, chHW: hw}
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
	w.ch = [nCh]chanSums{}
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
			c := &w.ch[k]
			c.sum += v
			c.sumSq += v * v
			c.sumJ += float64(j) * v
		}
	}
}

func (w *window4) mean(k int) float64 {
	if w.count == w.n {
		return w.ch[k].sum * w.fullK.invN
	}
	if w.count == 0 {
		return 0
	}
	return w.ch[k].sum / float64(w.count)
}

func (w *window4) variance(k int) float64 {
	c := &w.ch[k]
	switch {
	case w.count == w.n:
		return w.fullK.variance(c)
	case w.count < 2:
		return 0
	}
	n := float64(w.count)
	v := (c.sumSq - c.sum*c.sum/n) / n
	if v < 0 {
		return 0
	}
	return v
}

func (w *window4) slope(k int) float64 {
	c := &w.ch[k]
	if w.count == w.n {
		return w.fullK.slope(c)
	}
	if w.count < 2 {
		return 0
	}
	n := float64(w.count)
	sj := n * (n - 1) / 2
	sjj := (n - 1) * n * (2*n - 1) / 6
	return (n*c.sumJ - sj*c.sum) / (n*sjj - sj*sj)
}

// pushWindows adds an active sample's inputs to the steady-state windows:
// valve, airflow, SAT and HW temperature over the full window, DAT over its
// last half.
func (st *termState) pushWindows(in *inputs) {
	st.in.push4(in.u, in.v, in.sat, in.hw)
	st.dat.push(in.dat)
}

// steadiness reports whether the DAT is steady over its window (full,
// |slope| and variance within the limits) and whether the whole sample is
// steady (the DAT and every input, inputsSteady).
func (en *Engine) steadiness(st *termState) (datSteady, steady bool) {
	datSteady = st.dat.full() && math.Abs(st.dat.fullSlope()) <= en.tempSlope && st.dat.variance() <= en.tempVar
	return datSteady, datSteady && en.inputsSteady(st)
}

// inputsSteady checks the full-window steadiness of valve, airflow, SAT and
// HW temperature.
func (en *Engine) inputsSteady(st *termState) bool {
	w4 := &st.in
	if !w4.full() {
		return false
	}
	k, c := &w4.fullK, &en.cfg
	w := float64(w4.n - 1)
	cv := &w4.ch[chValve]
	if math.Abs(k.slope(cv))*w > c.SteadyValveSpan || k.variance(cv) > en.valveVar {
		return false
	}
	ca := &w4.ch[chAir]
	fa := c.SteadyAirflowFrac * (ca.sum * k.invN)
	if k.variance(ca) > fa*fa+1e-6 || math.Abs(k.slope(ca))*w > 2*fa+1e-3 {
		return false
	}
	cs := &w4.ch[chSAT]
	if math.Abs(k.slope(cs)) > en.tempSlope || k.variance(cs) > en.tempVar {
		return false
	}
	return math.Abs(k.slope(&w4.ch[chHW])) <= en.hwSlope
}
