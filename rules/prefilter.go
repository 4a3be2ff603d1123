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
	preset   uint64  // bits of clauses a rule does not have (always hold)
	// scoreGE are the literals score ≥ t on a signature score taken out of
	// ge when every t is positive, scoreMinBits the bit pattern of the
	// smallest t. See pass.
	scoreGE      []pfLit
	scoreMinBits uint64
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
func buildPrefilter(rules []*compiled, s *schema) prefilter {
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
		if a, b, bits := scoreRun(pw.ge); b > a {
			pw.scoreGE = append([]pfLit(nil), pw.ge[a:b]...)
			pw.ge = append(pw.ge[:a:a], pw.ge[b:]...)
			pw.scoreMinBits = bits
		}
	}
	return pf
}

// pass returns the bits (2k) of the rules of word w whose clauses all hold
// at the evidence struct p. The loops branch on each literal; on a healthy
// terminal every literal fails and the branches are predicted (measured
// faster than branch-free selects and than unrolled loops).
//
// The literals on signature scores are skipped together when the bitwise OR
// of all scores' IEEE 754 bit patterns is below the pattern of their
// smallest (positive) threshold: then every pattern is below it, so every
// score has its sign bit clear, is no NaN and, as non-negative floats order
// like their patterns, is below every threshold of the run. On a healthy
// terminal every score is near 0.
func (w *pfWord) pass(p unsafe.Pointer) uint64 {
	m := w.preset | passGE(w.ge, p)
	if len(w.scoreGE) != 0 {
		sc := (*[nScores]uint64)(unsafe.Add(p, scoresOff)) // the scores' bit patterns
		if sc[0]|sc[1]|sc[2]|sc[3]|sc[4]|sc[5]|sc[6]|sc[7]|sc[8]|sc[9]|sc[10]|sc[11] >= w.scoreMinBits {
			m |= passGE(w.scoreGE, p)
		}
	}
	for i := range w.le {
		l := &w.le[i]
		if *(*float64)(unsafe.Add(p, l.off)) <= l.t {
			m |= l.bit
		}
	}
	// The literals on differences of two fields (written here: a call
	// would cost more than the usual two literals).
	for i := range w.geD {
		l := &w.geD[i]
		if *(*float64)(unsafe.Add(p, l.off))-*(*float64)(unsafe.Add(p, l.offB)) >= l.t {
			m |= l.bit
		}
	}
	for i := range w.leD {
		l := &w.leD[i]
		if *(*float64)(unsafe.Add(p, l.off))-*(*float64)(unsafe.Add(p, l.offB)) <= l.t {
			m |= l.bit
		}
	}
	return m & (m >> 1) & evenBits
}

// passGE evaluates literals a ≥ t.
func passGE(ls []pfLit, p unsafe.Pointer) uint64 {
	var m uint64
	for i := range ls {
		l := &ls[i]
		if *(*float64)(unsafe.Add(p, l.off)) >= l.t {
			m |= l.bit
		}
	}
	return m
}
