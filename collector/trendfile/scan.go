package trendfile

import (
	"bytes"
	"errors"
	"fmt"
	"io"
)

// MaxRecordBytes bounds one record (a quoted field may span lines); a
// longer record is an error rather than unbounded memory.
const MaxRecordBytes = 16 << 20

const initialBuf = 256 << 10

var errRecordTooLong = errors.New("record longer than 16 MiB (unterminated quote?)")

// scanner reads complete records from a stream with one reusable buffer:
// memory is constant in the file size. A record is one line, or several
// when a quoted field holds a line break (RFC 4180 §2.6). Only records
// ending in a line break are returned, unless final is set, in which case
// an unterminated last record is returned at EOF too.
type scanner struct {
	r          io.Reader
	buf        []byte
	start, end int
	eof        bool
	final      bool
	offset     int64 // stream offset of buf[start]
	line       int64 // line number of the next record, 1-based
	quote      byte
	open       bool // the last record returned had no line terminator (final, at EOF)
	readErr    error
}

func newScanner(r io.Reader, offset, line int64, final bool) *scanner {
	return &scanner{r: r, buf: make([]byte, initialBuf), offset: offset, line: line, final: final, quote: '"'}
}

// consumed returns the stream offset just after the last returned record.
func (s *scanner) consumed() int64 { return s.offset }

// next returns the next record without its line terminator, the line it
// starts on and whether it contains a quote (and so needs the RFC 4180
// path). At the end it returns io.EOF; a trailing partial record is left
// unconsumed unless final.
func (s *scanner) next() (rec []byte, line int64, quoted bool, err error) {
	scanFrom := s.start
	for {
		data := s.buf[scanFrom:s.end]
		if i := bytes.IndexByte(data, '\n'); i >= 0 {
			stop := scanFrom + i // index of '\n'
			rec = s.buf[s.start:stop]
			if bytes.IndexByte(rec, s.quote) >= 0 {
				quoted = true
				if bytes.Count(rec, []byte{s.quote})%2 == 1 {
					// The line break is inside a quoted field: keep going.
					scanFrom = stop + 1
					continue
				}
			}
			return s.take(stop+1, rec, quoted)
		}
		if s.eof {
			if s.final && s.end > s.start {
				rec = s.buf[s.start:s.end]
				quoted = bytes.IndexByte(rec, s.quote) >= 0
				s.open = true
				return s.take(s.end, rec, quoted)
			}
			return nil, s.line, false, io.EOF
		}
		scanned := scanFrom - s.start
		if err := s.fill(); err != nil {
			return nil, s.line, false, err
		}
		scanFrom = s.start + scanned
	}
}

// take consumes buf[s.start:stop] and returns rec trimmed of '\r'.
func (s *scanner) take(stop int, rec []byte, quoted bool) ([]byte, int64, bool, error) {
	line := s.line
	s.line++
	if quoted {
		s.line += int64(bytes.Count(rec, []byte{'\n'}))
	}
	s.offset += int64(stop - s.start)
	s.start = stop
	if n := len(rec); n > 0 && rec[n-1] == '\r' {
		rec = rec[:n-1]
	}
	return rec, line, quoted, nil
}

// fill moves unconsumed bytes to the front (growing the buffer when one
// record fills it) and reads more.
func (s *scanner) fill() error {
	if err := s.readErr; err != nil {
		s.readErr = nil
		return err
	}
	if s.start > 0 {
		n := copy(s.buf, s.buf[s.start:s.end])
		s.start, s.end = 0, n
	}
	if s.end == len(s.buf) {
		if len(s.buf) >= MaxRecordBytes {
			return fmt.Errorf("line %d: %w", s.line, errRecordTooLong)
		}
		nb := make([]byte, min(2*len(s.buf), MaxRecordBytes))
		copy(nb, s.buf[:s.end])
		s.buf = nb
	}
	for {
		n, err := s.r.Read(s.buf[s.end:])
		s.end += n
		if err == io.EOF {
			s.eof = true
			return nil
		}
		if err != nil {
			if n > 0 {
				s.readErr = err // return what was read first
				return nil
			}
			return err
		}
		if n > 0 {
			return nil
		}
	}
}

// splitFields splits an unquoted record on delim into dst (reused).
func splitFields(dst [][]byte, rec []byte, delim byte) [][]byte {
	dst = dst[:0]
	for {
		i := bytes.IndexByte(rec, delim)
		if i < 0 {
			return append(dst, rec)
		}
		dst = append(dst, rec[:i])
		rec = rec[i+1:]
	}
}

var errQuote = errors.New("bare quote in unquoted field or text after a closing quote")

// splitQuoted splits a record with RFC 4180 quoting: a field may be
// enclosed in double quotes, a quote inside one is doubled, and a quoted
// field may hold delimiters and line breaks. Field bytes are copied into
// scratch, which the returned fields alias.
func splitQuoted(dst [][]byte, scratch []byte, rec []byte, delim, quote byte) ([][]byte, []byte, error) {
	dst = dst[:0]
	scratch = scratch[:0]
	// Offsets into scratch; fields are sliced at the end because scratch may grow.
	var bounds [][2]int
	i := 0
	for {
		begin := len(scratch)
		if i < len(rec) && rec[i] == quote {
			i++
			for {
				j := bytes.IndexByte(rec[i:], quote)
				if j < 0 {
					return dst, scratch, errors.New("unterminated quoted field")
				}
				scratch = append(scratch, rec[i:i+j]...)
				i += j + 1
				if i < len(rec) && rec[i] == quote { // "" → "
					scratch = append(scratch, quote)
					i++
					continue
				}
				break
			}
			bounds = append(bounds, [2]int{begin, len(scratch)})
			if i == len(rec) {
				break
			}
			if rec[i] != delim {
				return dst, scratch, errQuote
			}
			i++
			continue
		}
		j := bytes.IndexByte(rec[i:], delim)
		end := len(rec)
		if j >= 0 {
			end = i + j
		}
		if bytes.IndexByte(rec[i:end], quote) >= 0 {
			return dst, scratch, errQuote
		}
		scratch = append(scratch, rec[i:end]...)
		bounds = append(bounds, [2]int{begin, len(scratch)})
		if j < 0 {
			break
		}
		i = end + 1
	}
	for _, b := range bounds {
		dst = append(dst, scratch[b[0]:b[1]:b[1]])
	}
	return dst, scratch, nil
}
