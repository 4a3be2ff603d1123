package rules

import (
	"math"
	"sort"
	"strings"
	"unsafe"

	"risewatch/fdd"
	"risewatch/units"
)

// The prefilter is the hot path's answer to "can any rule of this terminal
// do anything at this step?". A rule whose tracker is idle (no pending
// timer, no fault held) changes state only when its gates hold and its
// condition is true: false and unknown both leave an idle tracker as it is.
// So each rule carries up to two necessary clauses, derived at load time
// from its condition, that are true whenever the condition is true (under
// three-valued logic a true all-group has every child true and a true
// any-group some child true, and a true comparison has no NaN in it). A
// clause is an OR of at most clauseMax literals, and a literal is one
// comparison of a float field (or a difference of two) with a constant,
// written as x ≥ t or x ≤ t (strict comparisons move t by one ulp), which
// a NaN fails. All literals of up to rulesPerWord rules are evaluated by
// short loops, sorted by field offset, that set one bit per holding
// clause. Only rules whose clauses all hold
// and whose gates hold, or whose tracker is not idle, are looked at one by
// one; on a healthy terminal that is none of them.
//
// A condition the prefilter cannot reason about (a 'not', an 'is', a
// threshold with a ref, an absolute value, ==, !=) simply yields no
// clause, so the rule is always looked at when its gates hold.

// clauseMax bounds the literals of one clause (an any-group of wider
// alternatives yields no clause).
const clauseMax = 4

// rulesPerWord is how many rules share one prefilter word: rule k of a word
// owns bits 2k and 2k+1, one per clause.
const rulesPerWord = 32

// evenBits has bit 2k set for every k: the per-rule bit of a prefilter word.
const evenBits = 0x5555555555555555

// lit is one prefilter literal over x = (a − b) or x = a: it holds when
// x ≥ t (s = 1) or x ≤ t (s = −1); it is false for NaN.
type lit struct {
	off, offB uintptr
	hasB      bool
	s, t      float64
	name      string // field name, for ranking
}

// litOf converts a comparison to a literal; ok is false when it has none.
func litOf(c *Cond, s *schema) (lit, bool) {
	if c.Field == "" || c.Is != nil || c.Ref != "" || c.Abs || c.Value == "" {
		return lit{}, false
	}
	a, err := s.lookup(c.Field)
	if err != nil || a.kind != fieldFloat {
		return lit{}, false
	}
	l := lit{off: a.off, name: c.Field}
	dim := a.dim
	if c.Minus != "" {
		b, err := s.lookup(c.Minus)
		if err != nil || b.kind != fieldFloat {
			return lit{}, false
		}
		l.hasB, l.offB = true, b.off
		if dim == units.Temperature {
			dim = units.TempDiff
		}
	}
	op, ok := parseOp(c.Op)
	if !ok {
		return lit{}, false
	}
	v, err := parseValue(c.Value, dim, c.Field)
	if err != nil {
		return lit{}, false
	}
	// x > v is x ≥ nextUp(v) and x < v is x ≤ nextDown(v), exactly, for
	// every float x.
	switch op {
	case opGE:
		l.s, l.t = 1, v
	case opGT:
		l.s, l.t = 1, math.Nextafter(v, math.Inf(1))
	case opLE:
		l.s, l.t = -1, v
	case opLT:
		l.s, l.t = -1, math.Nextafter(v, math.Inf(-1))
	default:
		return lit{}, false
	}
	return l, true
}

// clause is an OR of literals.
type clause []lit

// rank orders clauses by how often they are expected to fail on a healthy
// terminal: signature scores (near 0 unless the engine sees the fault)
// first, the valve command (often at an end of its range) last.
func (c clause) rank() int {
	r := 0
	for _, l := range c {
		lr := 1
		switch {
		case strings.HasPrefix(l.name, "score."):
			lr = 0
		case l.name == "valve":
			lr = 2
		}
		r = max(r, lr)
	}
	return r*16 + len(c)
}

// or merges two clauses; literals on the same quantity and direction keep
// the looser threshold. ok is false when the result is too wide.
func (c clause) or(d clause) (clause, bool) {
	out := append(clause(nil), c...)
next:
	for _, l := range d {
		for i := range out {
			if o := &out[i]; o.off == l.off && o.hasB == l.hasB && (!l.hasB || o.offB == l.offB) && o.s == l.s {
				if l.s > 0 {
					o.t = min(o.t, l.t)
				} else {
					o.t = max(o.t, l.t)
				}
				continue next
			}
		}
		out = append(out, l)
	}
	return out, len(out) <= clauseMax
}

// necessary returns clauses whose conjunction is implied by c being true
// (c true ⇒ every clause true), best first. Nil means nothing is known.
func necessary(c *Cond, s *schema) []clause {
	switch {
	case c == nil:
		return nil
	case c.Field != "":
		if l, ok := litOf(c, s); ok {
			return []clause{{l}}
		}
		return nil
	case c.All != nil:
		var out []clause
		for i := range c.All {
			out = append(out, necessary(&c.All[i], s)...)
		}
		sort.SliceStable(out, func(i, j int) bool { return out[i].rank() < out[j].rank() })
		return out
	case c.Any != nil:
		var acc clause
		for i := range c.Any {
			k := necessary(&c.Any[i], s)
			if len(k) == 0 {
				return nil
			}
			var ok bool
			if acc, ok = acc.or(k[0]); !ok {
				return nil
			}
		}
		if len(acc) == 0 {
			return nil
		}
		return []clause{acc}
	}
	return nil
}

// pfLit is a literal placed in a prefilter word.
type pfLit struct {
	off, offB uint32
	t         float64
	bit       uint64
}

// pfWord is the prefilter for up to rulesPerWord rules.
type pfWord struct {
	ge, le   []pfLit // a ≥ t, a ≤ t
	geD, leD []pfLit // a − b ≥ t, a − b ≤ t
	// geDMin is the smallest t of geD, and geDOne is set when every
	// literal of geD is on the same two fields. See pass.
	geDMin float64
	geDOne bool
	preset uint64 // bits of clauses a rule does not have (always hold)
	// scoreGE are the literals score ≥ t on a signature score taken out of
	// ge when every t is positive, scoreMinBits the bit pattern of the
	// smallest t. See pass.
	scoreGE      []pfLit
	scoreMinBits uint64
	// lits are the literals as built, one per clause literal in rule and
	// clause order, for plainPass.
	lits []pfPlain

	// What pass reads (set by setFast): the first unrollMax literals of ge
	// and le as arrays with their counts, the literals beyond them (geLong,
	// leLong), and geDOff, geDOffB, the pair of fields of geD when geDOne.
	// rare is set when pass has anything beyond the unrolled literals, the
	// scores and the one pair of geD: literals beyond unrollMax, geD on more
	// than one pair, or leD.
	geA, leA       *[unrollMax]pfLit
	nGE, nLE       int
	geLong, leLong []pfLit
	geDOff         uint32
	geDOffB        uint32
	rare           bool
}

// pfPlain is a literal as built: a ≥ t or, with le, a ≤ t; with dif the
// quantity is a − b.
type pfPlain struct {
	pfLit
	le, dif bool
}

// scoresOff and scoresEnd bound Evidence.Scores in the record (the
// prefilter is built for terminal rules, over fdd.Evidence), nScores its
// length.
const (
	scoresOff = unsafe.Offsetof(fdd.Evidence{}.Scores)
	scoresEnd = scoresOff + unsafe.Sizeof(fdd.Evidence{}.Scores)
	nScores   = len(fdd.Evidence{}.Scores)
)

// pass ORs the nScores = 12 scores by hand: these fail to compile when the
// number of kinds changes, so that list is kept complete.
var (
	_ [nScores - 12]struct{}
	_ [12 - nScores]struct{}
)

// scoreRun finds the signature-score literals in ls (sorted by offset, so
// they are one run) and the bit pattern of their smallest threshold; a run
// with a threshold that is not positive and finite is not marked.
func scoreRun(ls []pfLit) (a, b int, minBits uint64) {
	a = len(ls)
	for i, l := range ls {
		if uintptr(l.off) >= scoresOff && uintptr(l.off) < scoresEnd {
			a = min(a, i)
			b = i + 1
		}
	}
	if b <= a {
		return 0, 0, 0
	}
	tMin := math.Inf(1)
	for _, l := range ls[a:b] {
		if !(l.t > 0) || math.IsInf(l.t, 1) {
			return 0, 0, 0
		}
		tMin = min(tMin, l.t)
	}
	return a, b, math.Float64bits(tMin)
}

// prefilter is the compiled prefilter of a scope's rules.
type prefilter struct {
	words []pfWord
}

// buildPrefilter derives the clauses of every rule, in rule order. A rule
// whose best clause is on a signature score keeps that one only (scores are
// near 0 on a healthy terminal; a second literal would cost more than it
// saves); otherwise it keeps its best two.
// The signature-score run of pass is taken out for terminal rules only
// (scores: the record is an fdd.Evidence).
func buildPrefilter(rules []*compiled, s *schema, scores bool) prefilter {
	var pf prefilter
	for r, c := range rules {
		w, k := r/rulesPerWord, uint(r%rulesPerWord)
		if w == len(pf.words) {
			pf.words = append(pf.words, pfWord{})
		}
		pw := &pf.words[w]
		cls := necessary(c.rule.When, s)
		if len(cls) > 1 && cls[0].rank() < 16 {
			cls = cls[:1]
		}
		for j := 0; j < 2; j++ {
			bit := uint64(1) << (2*k + uint(j))
			if j >= len(cls) {
				pw.preset |= bit
				continue
			}
			for _, l := range cls[j] {
				pl := pfLit{off: uint32(l.off), offB: uint32(l.offB), t: l.t, bit: bit}
				pw.lits = append(pw.lits, pfPlain{pl, l.s < 0, l.hasB})
				switch {
				case l.hasB && l.s > 0:
					pw.geD = append(pw.geD, pl)
				case l.hasB:
					pw.leD = append(pw.leD, pl)
				case l.s > 0:
					pw.ge = append(pw.ge, pl)
				default:
					pw.le = append(pw.le, pl)
				}
			}
		}
	}
	for w := range pf.words {
		pw := &pf.words[w]
		for _, ls := range [][]pfLit{pw.ge, pw.le, pw.geD, pw.leD} {
			// Evidence read in address order.
			sort.SliceStable(ls, func(i, j int) bool { return ls[i].off < ls[j].off })
		}
		if a, b, bits := scoreRun(pw.ge); scores && b > a {
			pw.scoreGE = append([]pfLit(nil), pw.ge[a:b]...)
			pw.ge = append(pw.ge[:a:a], pw.ge[b:]...)
			pw.scoreMinBits = bits
		}
		pw.ge, pw.le = padLits(pw.ge, unrollMax), padLits(pw.le, unrollMax)
		if len(pw.geD) > 0 {
			pw.geDMin, pw.geDOne = pw.geD[0].t, true
			for _, l := range pw.geD {
				pw.geDMin = min(pw.geDMin, l.t)
				pw.geDOne = pw.geDOne && l.off == pw.geD[0].off && l.offB == pw.geD[0].offB
			}
		}
		pw.setFast()
	}
	return pf
}

// setFast sets what pass reads from the literal lists.
func (w *pfWord) setFast() {
	w.geA, w.nGE = (*[unrollMax]pfLit)(w.ge[:unrollMax]), min(len(w.ge), unrollMax)
	w.leA, w.nLE = (*[unrollMax]pfLit)(w.le[:unrollMax]), min(len(w.le), unrollMax)
	w.geLong, w.leLong = nil, nil
	if len(w.ge) > unrollMax {
		w.geLong = w.ge[unrollMax:]
	}
	if len(w.le) > unrollMax {
		w.leLong = w.le[unrollMax:]
	}
	if w.geDOne {
		w.geDOff, w.geDOffB = w.geD[0].off, w.geD[0].offB
	}
	w.rare = w.geLong != nil || w.leLong != nil || len(w.leD) != 0 || (len(w.geD) != 0 && !w.geDOne)
}

// pass returns the bits (2k) of the rules of word w whose clauses all hold
// at the evidence struct p. Each literal is one branch; on a healthy
// terminal every literal fails and the branches are predicted. The first
// unrollMax literals a ≥ t and a ≤ t are evaluated by a switch on their
// count that falls through one unrolled literal per case: no loop counter,
// no bounds checks, no call, the literal's fields read straight from the
// fixed-size array padLits makes room for (about half the instructions of
// a loop per literal). The arrays and counts are fields set once by
// setFast, and all that the built-in rules do not have (literals beyond
// unrollMax, leD, geD on more than one pair of fields) is behind one flag,
// rare: pass is a leaf without a frame, and each switch is a load of the
// count and a jump.
//
// The literals on signature scores are skipped together when the bitwise OR
// of all scores' IEEE 754 bit patterns is below the pattern of their
// smallest (positive) threshold: then every pattern is below it, so every
// score has its sign bit clear, is no NaN and, as non-negative floats order
// like their patterns, is below every threshold of the run. On a healthy
// terminal every score is near 0.
func (w *pfWord) pass(p unsafe.Pointer) uint64 {
	m := w.preset
	if w.rare {
		// Literals beyond the unrolled ones, geD not on one pair of
		// fields, leD: none on the built-in rules.
		m |= passGE(w.geLong, p) | passLE(w.leLong, p)
		if !w.geDOne {
			m |= passGED(w.geD, p)
		}
		for i := range w.leD {
			l := &w.leD[i]
			if f64(p, l.off)-f64(p, l.offB) <= l.t {
				m |= l.bit
			}
		}
	}
	switch a := w.geA; w.nGE {
	case 8:
		if f64(p, a[7].off) >= a[7].t {
			m |= a[7].bit
		}
		fallthrough
	case 7:
		if f64(p, a[6].off) >= a[6].t {
			m |= a[6].bit
		}
		fallthrough
	case 6:
		if f64(p, a[5].off) >= a[5].t {
			m |= a[5].bit
		}
		fallthrough
	case 5:
		if f64(p, a[4].off) >= a[4].t {
			m |= a[4].bit
		}
		fallthrough
	case 4:
		if f64(p, a[3].off) >= a[3].t {
			m |= a[3].bit
		}
		fallthrough
	case 3:
		if f64(p, a[2].off) >= a[2].t {
			m |= a[2].bit
		}
		fallthrough
	case 2:
		if f64(p, a[1].off) >= a[1].t {
			m |= a[1].bit
		}
		fallthrough
	case 1:
		if f64(p, a[0].off) >= a[0].t {
			m |= a[0].bit
		}
	}
	switch a := w.leA; w.nLE {
	case 8:
		if f64(p, a[7].off) <= a[7].t {
			m |= a[7].bit
		}
		fallthrough
	case 7:
		if f64(p, a[6].off) <= a[6].t {
			m |= a[6].bit
		}
		fallthrough
	case 6:
		if f64(p, a[5].off) <= a[5].t {
			m |= a[5].bit
		}
		fallthrough
	case 5:
		if f64(p, a[4].off) <= a[4].t {
			m |= a[4].bit
		}
		fallthrough
	case 4:
		if f64(p, a[3].off) <= a[3].t {
			m |= a[3].bit
		}
		fallthrough
	case 3:
		if f64(p, a[2].off) <= a[2].t {
			m |= a[2].bit
		}
		fallthrough
	case 2:
		if f64(p, a[1].off) <= a[1].t {
			m |= a[1].bit
		}
		fallthrough
	case 1:
		if f64(p, a[0].off) <= a[0].t {
			m |= a[0].bit
		}
	}
	if len(w.scoreGE) != 0 {
		sc := (*[nScores]uint64)(unsafe.Add(p, scoresOff)) // the scores' bit patterns
		if sc[0]|sc[1]|sc[2]|sc[3]|sc[4]|sc[5]|sc[6]|sc[7]|sc[8]|sc[9]|sc[10]|sc[11] >= w.scoreMinBits {
			m |= passGE(w.scoreGE, p)
		}
	}
	// The literals on differences of two fields (few). When they are all
	// on one pair of fields (the two low-DAT rules' setpoint minus DAT ≥ 8 K
	// and ≥ 17 K) and that difference is below the smallest threshold, or
	// NaN, every one of them fails: one subtraction and compare instead of
	// the loop. Other differences are evaluated with the rare literals
	// above.
	if w.geDOne && f64(p, w.geDOff)-f64(p, w.geDOffB) >= w.geDMin {
		m |= passGED(w.geD, p)
	}
	return m & (m >> 1) & evenBits
}

// unrollMax is how many literals of one kind the unrolled switches take;
// padLits gives the literal slices at least this capacity.
const unrollMax = 8

// padLits copies ls into a slice of capacity at least n (the unrolled
// evaluation views it as an array of that size).
func padLits(ls []pfLit, n int) []pfLit {
	return append(make([]pfLit, 0, max(n, len(ls))), ls...)
}

// f64 reads the float64 at byte offset off of p.
func f64(p unsafe.Pointer, off uint32) float64 { return *(*float64)(unsafe.Add(p, off)) }

// passGE evaluates literals a ≥ t (the signature scores, and literals of
// a kind beyond the unrolled ones).
func passGE(ls []pfLit, p unsafe.Pointer) uint64 {
	var m uint64
	for i := range ls {
		if l := &ls[i]; f64(p, l.off) >= l.t {
			m |= l.bit
		}
	}
	return m
}

// passLE evaluates literals a ≤ t (as passGE).
func passLE(ls []pfLit, p unsafe.Pointer) uint64 {
	var m uint64
	for i := range ls {
		if l := &ls[i]; f64(p, l.off) <= l.t {
			m |= l.bit
		}
	}
	return m
}

// passGED evaluates literals a − b ≥ t.
func passGED(ls []pfLit, p unsafe.Pointer) uint64 {
	var m uint64
	for i := range ls {
		if l := &ls[i]; f64(p, l.off)-f64(p, l.offB) >= l.t {
			m |= l.bit
		}
	}
	return m
}

// plainPass is pass the plain way, for the tests: every literal of every
// clause evaluated on its own, as built.
func (w *pfWord) plainPass(p unsafe.Pointer) uint64 {
	m := w.preset
	for _, l := range w.lits {
		x := f64(p, l.off)
		if l.dif {
			x -= f64(p, l.offB)
		}
		if (l.le && x <= l.t) || (!l.le && x >= l.t) {
			m |= l.bit
		}
	}
	return m & (m >> 1) & evenBits
}
