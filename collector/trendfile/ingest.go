package trendfile

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"risewatch/collector"
)

// fileMark is a file's checkpoint: how far it was read and a fingerprint
// of the bytes just before that point, to tell a continued file from a
// replaced one.
type fileMark struct {
	File   string `json:"file"`
	Offset int64  `json:"offset"`      // bytes consumed (always a record boundary)
	Line   int64  `json:"line"`        // line number at Offset
	Tail   string `json:"tail"`        // SHA-256 of up to 4 KiB before Offset
	Done   bool   `json:"done"`        // read to the end and final (moved or to be moved)
	T      int64  `json:"t,omitempty"` // time of the last row before Offset (Unix ns), when HasT
	HasT   bool   `json:"has_t,omitempty"`
	Open   bool   `json:"open,omitempty"` // Offset is just after a last line that had no terminator
}

const (
	identityMaxBytes = 1 << 20
	tailBytes        = 4096
)

// identity hashes the file's first lines (skipped rows, the header and the
// first data row, at most 1 MiB). Those bytes do not change while a file
// grows and differ between exports, so they name the content whatever the
// file is called. ok is false when the lines are not complete yet.
func identity(f *os.File, size int64, lines int, final bool) (string, bool, error) {
	n := min(size, identityMaxBytes)
	buf := make([]byte, n)
	if _, err := f.ReadAt(buf, 0); err != nil && !errors.Is(err, io.EOF) {
		return "", false, err
	}
	end, seen := -1, 0
	for i, c := range buf {
		if c == '\n' {
			seen++
			if seen == lines {
				end = i + 1
				break
			}
		}
	}
	switch {
	case end >= 0:
	case final || n == identityMaxBytes:
		end = int(n)
	default:
		return "", false, nil
	}
	h := sha256.Sum256(buf[:end])
	return hex.EncodeToString(h[:]), true, nil
}

func tailHash(f *os.File, off int64) (string, error) {
	start := max(0, off-tailBytes)
	buf := make([]byte, off-start)
	if _, err := f.ReadAt(buf, start); err != nil && !errors.Is(err, io.EOF) {
		return "", err
	}
	h := sha256.Sum256(buf)
	return hex.EncodeToString(h[:]), nil
}

func (s *Source) key(id string) string { return "trendfile/" + s.cfg.Name + "/" + id }

func (s *Source) loadMark(key string) (fileMark, error) {
	var m fileMark
	b, ok, err := s.cfg.Checkpoints.Get(key)
	if err != nil || !ok {
		return m, err
	}
	if err := json.Unmarshal(b, &m); err != nil {
		return fileMark{}, fmt.Errorf("checkpoint %s: %w", key, err)
	}
	return m, nil
}

func (s *Source) saveMark(key string, f *os.File, m fileMark) error {
	t, err := tailHash(f, m.Offset)
	if err != nil {
		return err
	}
	m.Tail = t
	b, _ := json.Marshal(m)
	return s.cfg.Checkpoints.Put(key, b)
}

// ingestResult says what became of a file.
type ingestResult int

const (
	notReady  ingestResult = iota // first lines incomplete: try again later
	readSome                      // read to its last complete line (or its end, if it may still grow)
	complete                      // read to the end, final, and its checkpoint says done
	readToEnd                     // Progress mode: read to the end, final; done once a commit covers it
)

// ingest reads path from its checkpoint up to the size it has now and
// sends the readings. final reads an unterminated last line too (the file
// has settled); finish marks the file done at its end (it will not grow).
// Without Progress the checkpoint advances past batches the consumer's
// channel took; with it, commits store positions (see progress.go).
func (s *Source) ingest(ctx context.Context, path string, final, finish bool, out chan<- []collector.Reading) (ingestResult, error) {
	f, err := os.Open(path)
	if err != nil {
		return notReady, fmt.Errorf("trend source %s: %w", s.cfg.Name, err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return notReady, fmt.Errorf("%s: %w", path, err)
	}
	size := st.Size()
	id, ok, err := identity(f, size, s.fmt.skipRows+2, final)
	if err != nil {
		return notReady, fmt.Errorf("%s: %w", path, err)
	}
	if !ok {
		return notReady, nil
	}
	key := s.key(id)
	var fs *fileState
	var mark fileMark
	fresh := true
	if s.files != nil {
		fs, fresh = s.state(key, path)
		if !fresh {
			s.fmu.Lock()
			mark = fs.read
			done, kept := fs.readDone, fs.doneKept
			s.fmu.Unlock()
			switch {
			case kept:
				return complete, nil
			case done:
				return readToEnd, nil
			}
		}
	}
	if fresh {
		if mark, err = s.loadMark(key); err != nil {
			return notReady, err
		}
		if mark.Offset > 0 && !mark.Done {
			t, err := tailHash(f, mark.Offset)
			if err != nil || size < mark.Offset || t != mark.Tail {
				s.log.Warn("trend file changed under its checkpoint (same first lines, different body); reading it again from the start",
					"source", s.cfg.Name, "file", path, "checkpoint_offset", mark.Offset, "size", size)
				mark = fileMark{}
			}
		}
		if fs != nil {
			s.fmu.Lock()
			fs.begin(mark)
			s.fmu.Unlock()
		}
		if mark.Done {
			return complete, nil
		}
	}
	if mark.Offset == size && !(finish && fs != nil) {
		return readSome, nil
	}
	if mark.Open && size > mark.Offset {
		off, ok, err := s.afterOpenLine(f, path, mark.Offset, size)
		if err != nil || !ok {
			return readSome, err
		}
		mark.Offset, mark.Open = off, false
	}
	mark.File = filepath.Base(path)

	p, err := s.parser(path)
	if err != nil {
		return notReady, err
	}
	sc := newScanner(io.NewSectionReader(f, 0, size), 0, 1, final)
	if err := p.readHeader(sc); err != nil {
		if errors.Is(err, errNoHeader) && !final {
			return notReady, nil
		}
		return notReady, err
	}
	if mark.Offset > sc.consumed() {
		sc = newScanner(io.NewSectionReader(f, mark.Offset, size-mark.Offset), mark.Offset, mark.Line, final)
	}
	if mark.HasT {
		// Continue the time checks where the last read stopped.
		p.lastT, p.hasT = mark.T, true
		p.tp.prev, p.tp.hasPrev = mark.T, true
	}
	lastPut := time.Now()
	emit := func(b []collector.Reading, end, line int64) error {
		if err := send(ctx, out, b); err != nil {
			return err
		}
		mark.Offset, mark.Line = end, line
		mark.T, mark.HasT = p.lastT, p.hasT
		if fs != nil {
			return s.addMark(fs, f, posMark{off: end, line: line, t: p.lastT, hasT: p.hasT}, false)
		}
		if time.Since(lastPut) >= s.cfg.CheckpointEvery {
			lastPut = time.Now()
			return s.saveMark(key, f, mark)
		}
		return nil
	}
	rerr := p.readRows(ctx, sc, emit)
	p.st.Files = 1
	p.warn.summary(p.st)
	s.mu.Lock()
	s.stats.add(p.st)
	s.mu.Unlock()
	if rerr == nil && sc.open && mark.Offset == size {
		mark.Open = true
	}
	if fs != nil {
		res := readSome
		if err := s.addMark(fs, f, posMark{off: mark.Offset, line: mark.Line, t: mark.T, hasT: mark.HasT, open: mark.Open}, true); err != nil {
			return notReady, errors.Join(rerr, err)
		}
		s.fmu.Lock()
		fs.read, fs.lastT, fs.hasLastT = mark, mark.T, mark.HasT
		if rerr == nil && finish {
			fs.readDone, res = true, readToEnd
		}
		s.fmu.Unlock()
		if rerr != nil {
			return notReady, rerr
		}
		return res, nil
	}
	res := readSome
	if rerr == nil && finish {
		mark.Done, res = true, complete
	}
	if err := s.saveMark(key, f, mark); err != nil {
		return notReady, errors.Join(rerr, err)
	}
	if rerr != nil {
		return notReady, rerr
	}
	return res, nil
}

// afterOpenLine is where to continue a file whose last line was read
// without a terminator (it had settled) and which has grown since: just
// past the terminator when that is what arrived, else — the line was
// still being written — past the rest of that line, with a warning (its
// readings were sent from the part that had arrived). ok is false while
// that line is still incomplete.
func (s *Source) afterOpenLine(f *os.File, path string, off, size int64) (int64, bool, error) {
	n := min(size-off, MaxRecordBytes)
	buf := make([]byte, min(n, 2))
	if _, err := f.ReadAt(buf, off); err != nil && !errors.Is(err, io.EOF) {
		return off, false, fmt.Errorf("%s: %w", path, err)
	}
	switch {
	case buf[0] == '\n':
		return off + 1, true, nil
	case buf[0] == '\r' && len(buf) == 1:
		return off, false, nil // "\r" so far: wait for what follows
	case buf[0] == '\r' && buf[1] == '\n':
		return off + 2, true, nil
	case buf[0] == '\r':
		return off + 1, true, nil
	}
	rest := make([]byte, n)
	if _, err := f.ReadAt(rest, off); err != nil && !errors.Is(err, io.EOF) {
		return off, false, fmt.Errorf("%s: %w", path, err)
	}
	i := bytes.IndexByte(rest, '\n')
	if i < 0 {
		return off, false, nil
	}
	s.log.Warn("trend file grew on a last line read after it had settled (it was not complete); the rest of that line is skipped",
		"source", s.cfg.Name, "file", path, "offset", off, "skipped_bytes", i+1)
	return off + int64(i) + 1, true, nil
}
