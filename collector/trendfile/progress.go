package trendfile

import (
	"encoding/json"
	"os"
	"time"
)

// With Config.Progress the checkpoints follow the consumer, not the
// channel: while a file is read the source keeps resume marks (offset, line
// and the time of the last row before the offset, with the hash of the
// bytes before it), and on each commit stores for every open file the last
// mark whose rows before it are all at or before the commit's readFrom
// time (watermark − lookback). A restart re-reads from there and the
// assembler skips the steps before the watermark. A file is marked done
// (and only then moved to ProcessedDir) once it was read to its end and its
// last row is at or before readFrom.

// markBytes is the least input between two resume marks of a file.
const markBytes = 64 << 10

// maxMarks bounds a file's marks when commits lag far behind (a consumer
// that does not accept): the older half is thinned, which only moves a
// resume point earlier.
const maxMarks = 4096

// posMark is a position a file can be resumed from.
type posMark struct {
	off, line int64
	t         int64 // time of the last row before off (ns), when hasT
	hasT      bool
	open      bool // off is just after an unterminated last line
	tail      string
}

// fileState is what the source knows of a file it has read in this
// process (Progress mode only).
type fileState struct {
	path      string
	read      fileMark // how far it was read in this process
	readDone  bool     // read to its end, final
	lastT     int64
	hasLastT  bool
	marks     []posMark
	committed fileMark // last stored checkpoint
	doneKept  bool     // the stored checkpoint says done
}

// state returns the file's state, and whether it was new (then the caller
// loads the stored checkpoint and calls begin).
func (s *Source) state(key, path string) (*fileState, bool) {
	s.fmu.Lock()
	defer s.fmu.Unlock()
	fs := s.files[key]
	if fs == nil {
		fs = &fileState{path: path}
		s.files[key] = fs
		return fs, true
	}
	fs.path = path
	return fs, false
}

// begin sets a new state from the stored checkpoint m.
func (fs *fileState) begin(m fileMark) {
	fs.read, fs.committed, fs.doneKept = m, m, m.Done
	fs.marks = fs.marks[:0]
	fs.marks = append(fs.marks, posMark{off: m.Offset, line: m.Line, t: m.T, hasT: m.HasT, open: m.Open, tail: m.Tail})
	fs.lastT, fs.hasLastT = m.T, m.HasT
}

// addMark records a resume position after a batch the consumer's channel
// took; f is the open file (for the tail hash). force adds it even when
// little was read since the last mark (the end of a read).
func (s *Source) addMark(fs *fileState, f *os.File, m posMark, force bool) error {
	s.fmu.Lock()
	n := len(fs.marks)
	skip := n > 0 && !force && m.off-fs.marks[n-1].off < s.markEvery
	same := n > 0 && fs.marks[n-1].off == m.off && fs.marks[n-1].open == m.open
	s.fmu.Unlock()
	if skip || same {
		return nil
	}
	t, err := tailHash(f, m.off)
	if err != nil {
		return err
	}
	m.tail = t
	s.fmu.Lock()
	defer s.fmu.Unlock()
	fs.marks = append(fs.marks, m)
	if len(fs.marks) > maxMarks {
		k := 0
		half := len(fs.marks) / 2
		for i := range fs.marks {
			if i >= half || i%2 == 0 {
				fs.marks[k] = fs.marks[i]
				k++
			}
		}
		fs.marks = fs.marks[:k]
	}
	return nil
}

// commit is the source's CommitFunc: store, per file read in this process,
// the last mark whose earlier rows are all at or before readFrom.
func (s *Source) commit(_, readFrom time.Time) error {
	from := readFrom.UnixNano()
	s.fmu.Lock()
	defer s.fmu.Unlock()
	for key, fs := range s.files {
		if fs.doneKept {
			continue
		}
		var m fileMark
		if fs.readDone && (!fs.hasLastT || fs.lastT <= from) {
			m = fs.read
			m.Done = true
			if n := len(fs.marks); n > 0 {
				m.Tail = fs.marks[n-1].tail
			}
		} else {
			best := -1
			for i, pm := range fs.marks {
				if pm.hasT && pm.t > from {
					break
				}
				best = i
			}
			if best >= 0 {
				pm := fs.marks[best]
				m = fileMark{Offset: pm.off, Line: pm.line, Tail: pm.tail, T: pm.t, HasT: pm.hasT, Open: pm.open}
				fs.marks = append(fs.marks[:0], fs.marks[best:]...)
			}
		}
		m.File = fs.read.File
		if m == fs.committed {
			continue
		}
		b, _ := json.Marshal(m)
		if err := s.cfg.Checkpoints.Put(key, b); err != nil {
			return err
		}
		fs.committed, fs.doneKept = m, m.Done
	}
	return nil
}

// committedDone reports whether key's stored checkpoint says done, and
// forgets the file's state if so (it is moved away).
func (s *Source) committedDone(key string) bool {
	s.fmu.Lock()
	defer s.fmu.Unlock()
	fs := s.files[key]
	if fs == nil || !fs.doneKept {
		return false
	}
	delete(s.files, key)
	return true
}

// identityOf returns the content identity of a complete file.
func (s *Source) identityOf(path string) (string, bool) {
	f, err := os.Open(path)
	if err != nil {
		return "", false
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return "", false
	}
	id, ok, err := identity(f, st.Size(), s.fmt.skipRows+2, true)
	return id, ok && err == nil
}
