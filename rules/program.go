package rules

import (
	"math"
	"unsafe"
)

// program is a compiled condition: the condition tree laid out flat in
// pre-order, one fixed-size node per comparison or group. A group's children
// follow it directly and node.end is the index just past a node's subtree,
// so a group walks its children by jumping from end to end and the common
// comparison of one float field with a constant is evaluated inline in that
// loop with no call at all. Evaluation reads the evidence struct through
// byte offsets resolved by reflection at load time: no closures, no
// interface calls, no allocation.
type program []node

type nodeKind uint8

const (
	nFloat nodeKind = iota // float64 field at off compared with v
	nExpr                  // general comparison: any field kind, minus, abs, ref
	nIs                    // truth-valued field equals want
	nAll                   // three-valued AND of the children
	nAny                   // three-valued OR of the children
	nNot                   // three-valued NOT of the one child
)

// node is one comparison or group of a program.
type node struct {
	kind  nodeKind
	op    cmpOp
	abs   bool
	hasB  bool
	hasR  bool
	want  bool    // nIs
	end   int32   // index just past this node's subtree
	off   uintptr // nFloat
	v     float64 // threshold (constant part)
	times float64 // threshold += times × ref
	a     field   // nExpr, nIs
	b     field   // nExpr: minus
	r     field   // nExpr: ref
}

// eval evaluates the program at the evidence struct p. An empty program is
// true (used for "no extra gates").
func (pr program) eval(p unsafe.Pointer) tri {
	if len(pr) == 0 {
		return triTrue
	}
	return pr.at(0, p)
}

// at evaluates the subtree rooted at node i.
func (pr program) at(i int, p unsafe.Pointer) tri {
	n := &pr[i]
	switch n.kind {
	case nAll:
		r := triTrue
		for j := i + 1; j < int(n.end); j = int(pr[j].end) {
			var v tri
			if c := &pr[j]; c.kind == nFloat {
				v = c.float(p)
			} else {
				v = pr.at(j, p)
			}
			switch v {
			case triFalse:
				return triFalse
			case triUnknown:
				r = triUnknown
			}
		}
		return r
	case nAny:
		r := triFalse
		for j := i + 1; j < int(n.end); j = int(pr[j].end) {
			var v tri
			if c := &pr[j]; c.kind == nFloat {
				v = c.float(p)
			} else {
				v = pr.at(j, p)
			}
			switch v {
			case triTrue:
				return triTrue
			case triUnknown:
				r = triUnknown
			}
		}
		return r
	case nNot:
		switch pr.at(i+1, p) {
		case triTrue:
			return triFalse
		case triFalse:
			return triTrue
		}
		return triUnknown
	case nFloat:
		return n.float(p)
	case nIs:
		if (n.a.read(p) == 1) == n.want {
			return triTrue
		}
		return triFalse
	}
	return n.expr(p)
}

// float is the common comparison: one load, one compare; NaN is unknown.
func (n *node) float(p unsafe.Pointer) tri {
	x := *(*float64)(unsafe.Add(p, n.off))
	if x != x {
		return triUnknown
	}
	if n.op.cmp(x, n.v) {
		return triTrue
	}
	return triFalse
}

// expr is the general comparison: (a − b), optionally |·|, against
// v + times × ref.
func (n *node) expr(p unsafe.Pointer) tri {
	x := n.a.read(p)
	if n.hasB {
		x -= n.b.read(p)
	}
	if n.abs {
		x = math.Abs(x)
	}
	t := n.v
	if n.hasR {
		t += n.times * n.r.read(p)
	}
	if x != x || t != t {
		return triUnknown
	}
	if n.op.cmp(x, t) {
		return triTrue
	}
	return triFalse
}

// negated returns a program for NOT pr (the implicit clear condition of a
// rule without clear_when).
func (pr program) negated() program {
	out := make(program, 0, len(pr)+1)
	out = append(out, node{kind: nNot, end: int32(len(pr) + 1)})
	for _, n := range pr {
		n.end++
		out = append(out, n)
	}
	return out
}
