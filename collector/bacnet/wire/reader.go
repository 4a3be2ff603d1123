package wire

import (
	"encoding/binary"
	"fmt"
)

// maxDepth bounds nesting of constructed data while skipping, so a hostile
// frame cannot recurse deeply.
const maxDepth = 32

// Reader walks tagged service data. Every method checks lengths first.
type Reader struct {
	b   []byte
	off int
}

// NewReader starts reading b.
func NewReader(b []byte) *Reader { return &Reader{b: b} }

// Done reports whether all data has been read.
func (r *Reader) Done() bool { return r.off >= len(r.b) }

// Offset is the number of octets consumed.
func (r *Reader) Offset() int { return r.off }

// Rest returns the unread octets.
func (r *Reader) Rest() []byte { return r.b[r.off:] }

// Peek returns the next tag header without consuming it.
func (r *Reader) Peek() (Tag, error) {
	t, _, err := DecodeTag(r.b[r.off:])
	return t, err
}

// next consumes one tag header and its content, returning both.
func (r *Reader) next() (Tag, []byte, error) {
	t, n, err := DecodeTag(r.b[r.off:])
	if err != nil {
		return t, nil, fmt.Errorf("at octet %d: %w", r.off, err)
	}
	l := t.contentLen()
	c := r.b[r.off+n : r.off+n+l]
	r.off += n + l
	return t, c, nil
}

// IsOpening reports whether the next tag opens context tag n.
func (r *Reader) IsOpening(n uint8) bool {
	t, err := r.Peek()
	return err == nil && t.Opening && t.Number == n
}

// IsClosing reports whether the next tag closes context tag n.
func (r *Reader) IsClosing(n uint8) bool {
	t, err := r.Peek()
	return err == nil && t.Closing && t.Number == n
}

// IsContext reports whether the next tag is primitive context tag n.
func (r *Reader) IsContext(n uint8) bool {
	t, err := r.Peek()
	return err == nil && t.Context && !t.Opening && !t.Closing && t.Number == n
}

// Open consumes opening tag n.
func (r *Reader) Open(n uint8) error {
	t, _, err := r.next()
	if err != nil {
		return err
	}
	if !t.Opening || t.Number != n {
		return fmt.Errorf("bacnet: at octet %d: want opening tag %d", r.off, n)
	}
	return nil
}

// Close consumes closing tag n.
func (r *Reader) Close(n uint8) error {
	t, _, err := r.next()
	if err != nil {
		return err
	}
	if !t.Closing || t.Number != n {
		return fmt.Errorf("bacnet: at octet %d: want closing tag %d", r.off, n)
	}
	return nil
}

func (r *Reader) context(n uint8) ([]byte, error) {
	t, c, err := r.next()
	if err != nil {
		return nil, err
	}
	if !t.Context || t.Opening || t.Closing || t.Number != n {
		return nil, fmt.Errorf("bacnet: at octet %d: want context tag %d", r.off, n)
	}
	return c, nil
}

// ContextUnsigned reads context tag n as Unsigned or Enumerated.
func (r *Reader) ContextUnsigned(n uint8) (uint64, error) {
	c, err := r.context(n)
	if err != nil {
		return 0, err
	}
	return decodeUint(c)
}

// ContextSigned reads context tag n as a Signed Integer.
func (r *Reader) ContextSigned(n uint8) (int64, error) {
	c, err := r.context(n)
	if err != nil {
		return 0, err
	}
	return decodeInt(c)
}

// ContextObjectID reads context tag n as an object identifier.
func (r *Reader) ContextObjectID(n uint8) (ObjectID, error) {
	c, err := r.context(n)
	if err != nil {
		return ObjectID{}, err
	}
	if len(c) != 4 {
		return ObjectID{}, fmt.Errorf("bacnet: object identifier of %d octets", len(c))
	}
	return ObjectIDFromRaw(binary.BigEndian.Uint32(c)), nil
}

// ContextBitString reads context tag n as a bit string.
func (r *Reader) ContextBitString(n uint8) (BitString, error) {
	c, err := r.context(n)
	if err != nil {
		return BitString{}, err
	}
	return decodeBits(c)
}

// ContextBoolean reads context tag n as a Boolean.
func (r *Reader) ContextBoolean(n uint8) (bool, error) {
	c, err := r.context(n)
	if err != nil {
		return false, err
	}
	if len(c) != 1 {
		return false, fmt.Errorf("bacnet: context boolean of %d octets", len(c))
	}
	return c[0] != 0, nil
}

// ContextReal reads context tag n as a REAL.
func (r *Reader) ContextReal(n uint8) (float64, error) {
	c, err := r.context(n)
	if err != nil {
		return 0, err
	}
	v, err := decodeAppContent(Tag{Number: TagReal, Len: uint32(len(c))}, c)
	return v.F, err
}

// App reads one application-tagged primitive.
func (r *Reader) App() (Value, error) {
	t, c, err := r.next()
	if err != nil {
		return Value{}, err
	}
	if t.Context {
		return Value{}, fmt.Errorf("bacnet: at octet %d: want application tag, have context tag %d", r.off, t.Number)
	}
	return decodeAppContent(t, c)
}

// AppEnumerated reads an application Enumerated.
func (r *Reader) AppEnumerated() (uint64, error) {
	v, err := r.App()
	if err != nil {
		return 0, err
	}
	if v.Tag != TagEnumerated {
		return 0, fmt.Errorf("bacnet: want enumerated, have application tag %d", v.Tag)
	}
	return v.U, nil
}

// Skip consumes one element: a primitive, or a constructed element with
// everything up to its matching closing tag.
func (r *Reader) Skip() error {
	depth := 0
	for {
		t, _, err := r.next()
		if err != nil {
			return err
		}
		switch {
		case t.Opening:
			depth++
			if depth > maxDepth {
				return fmt.Errorf("bacnet: constructed data nested deeper than %d", maxDepth)
			}
		case t.Closing:
			depth--
			if depth < 0 {
				return fmt.Errorf("bacnet: at octet %d: unexpected closing tag %d", r.off, t.Number)
			}
		}
		if depth == 0 {
			return nil
		}
	}
}

// ValuesUntil decodes elements up to (and consuming) closing tag n.
// Application primitives are decoded; context-tagged or constructed elements
// are kept whole as TagRaw values.
func (r *Reader) ValuesUntil(n uint8) ([]Value, error) { return r.appendValuesUntil(nil, n) }

// appendValuesUntil is ValuesUntil appending to vs (an answer's shared
// value array: one allocation per answer instead of one per property).
func (r *Reader) appendValuesUntil(vs []Value, n uint8) ([]Value, error) {
	for {
		if r.Done() {
			return nil, fmt.Errorf("bacnet: missing closing tag %d: %w", n, ErrShort)
		}
		t, err := r.Peek()
		if err != nil {
			return nil, err
		}
		if t.Closing && t.Number == n {
			r.off += tagHeaderLen(r.b[r.off:])
			return vs, nil
		}
		if !t.Context {
			v, err := r.App()
			if err != nil {
				return nil, err
			}
			vs = append(vs, v)
			continue
		}
		start := r.off
		if err := r.Skip(); err != nil {
			return nil, err
		}
		vs = append(vs, Value{Tag: TagRaw, S: string(r.b[start:r.off])})
	}
}

func tagHeaderLen(b []byte) int {
	_, n, _ := DecodeTag(b)
	return n
}
