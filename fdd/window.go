package fdd

// maxWindow is the capacity of a sliding window (steps).
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
	ring   [maxWindow]float64
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

func (w *window) init(n int) { *w = window{n: n, fullK: newSlopeConst(n)} }

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
// push costs one ring update. Same sums and formulas as window.
type window4 struct {
	n      int
	count  int
	head   int
	pushes int
	sum    [nCh]float64
	sumSq  [nCh]float64
	sumJ   [nCh]float64
	fullK  slopeConst
	ring   [maxWindow][nCh]float64
}

func (w *window4) init(n int) { *w = window4{n: n, fullK: newSlopeConst(n)} }

func (w *window4) reset() {
	if w.count == 0 && w.head == 0 {
		return
	}
	w.count, w.head = 0, 0
	w.sum, w.sumSq, w.sumJ = [nCh]float64{}, [nCh]float64{}, [nCh]float64{}
}

func (w *window4) full() bool { return w.count == w.n }

// push appends one sample per channel (see window.push for the sliding Σj·x).
func (w *window4) push(x [nCh]float64) {
	slot := &w.ring[w.head]
	if w.count < w.n {
		c := float64(w.count)
		for k := 0; k < nCh; k++ {
			v := x[k]
			w.sumJ[k] += c * v
			w.sum[k] += v
			w.sumSq[k] += v * v
		}
		*slot = x
		w.count++
	} else {
		n1 := float64(w.n - 1)
		for k := 0; k < nCh; k++ {
			v, old := x[k], slot[k]
			w.sumJ[k] = w.sumJ[k] - (w.sum[k] - old) + n1*v
			w.sum[k] += v - old
			w.sumSq[k] += v*v - old*old
		}
		*slot = x
		w.pushes++
	}
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
			w.sumSq[k] += v * v
			w.sumJ[k] += float64(j) * v
		}
	}
}

func (w *window4) mean(k int) float64 {
	if w.count == w.n {
		return w.sum[k] * w.fullK.invN
	}
	if w.count == 0 {
		return 0
	}
	return w.sum[k] / float64(w.count)
}

func (w *window4) variance(k int) float64 {
	var v float64
	switch {
	case w.count == w.n:
		c := &w.fullK
		v = (w.sumSq[k] - w.sum[k]*w.sum[k]*c.invN) * c.invN
	case w.count < 2:
		return 0
	default:
		c := float64(w.count)
		v = (w.sumSq[k] - w.sum[k]*w.sum[k]/c) / c
	}
	if v < 0 {
		return 0
	}
	return v
}

func (w *window4) slope(k int) float64 {
	if w.count == w.n {
		c := &w.fullK
		return (c.n*w.sumJ[k] - c.sj*w.sum[k]) * c.invDen
	}
	if w.count < 2 {
		return 0
	}
	c := float64(w.count)
	sj := c * (c - 1) / 2
	sjj := (c - 1) * c * (2*c - 1) / 6
	return (c*w.sumJ[k] - sj*w.sum[k]) / (c*sjj - sj*sj)
}
