package trendfile

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"runtime"
	"sync"
	"sync/atomic"
	"time"

	"risewatch/collector"
)

// The parallel reader of wide files. The caller's goroutine (the merge)
// reads the stream into chunks of about chunkBytes that end on a record
// boundary, hands each to the helper goroutines (one fewer than the
// parsers asked for) and takes the chunks back in file order. It parses
// too, so that no helper is ever waited for:
//
//   - the next chunk in file order not claimed by a helper: the merge
//     parses it itself as the sequential reader does, rows straight into
//     its reused batch;
//   - a helper has parsed it: the merge delivers the helper's rows
//     (mergeChunk), doing everything that depends on the rows before: the
//     time-order check, the repeated-hour choice (it parses each row's time
//     again with the one sequential time parser; a row whose instant
//     differs from the helper's gets it patched), line numbers, counts,
//     warnings and their rate limit, batches and their stream offsets;
//   - a helper is still parsing it: the merge parses a later chunk no one
//     has claimed (into that chunk, as a helper would), or reads one into a
//     free slot for that; when there is neither (it is a whole pipeline
//     ahead of a helper that is descheduled or slow) it takes the chunk
//     back and parses it in order itself, and the helper's work is
//     dropped when it ends (the helper returns the slot).
//
// A chunk's state (chunkQueued … chunkMerge) is claimed by compare-and-swap,
// so a chunk is parsed into its slot by one goroutine only. The output is
// what the sequential reader gives, reading for reading and warning for
// warning; batch boundaries may differ (a batch ends at the end of a chunk,
// and before a row the merge rejects).
//
// The merge also chooses, window by window, whether to offer chunks to
// the helpers at all (modeChooser): on a machine with no spare CPU for
// them they only add their overhead, and it parses alone.
//
// A chunk ends at the last line break outside quotes: with no quote in
// the chunk that is its last line break; otherwise quotes are counted
// line by line and a line break ends a record exactly when the quotes
// since the chunk's start are even (the scanner's rule, applied from a
// record start, is additive), so records with quoted line breaks are
// never cut. A record longer than the chunk grows it, up to
// MaxRecordBytes. Memory is bounded by the fixed number of chunk slots.

// defaultChunkBytes is the input of one chunk: large enough that the
// hand-over costs little, small enough that a chunk's readings (about 12×
// its bytes) stay near the parsers' caches.
const defaultChunkBytes = 64 << 10

// The states of a chunk slot in the pipeline.
const (
	chunkQueued  int32 = iota // read, claimed by no one
	chunkParsing              // a helper parses it into the slot
	chunkParsed               // parsed into the slot (by a helper or the merge): mergeChunk delivers it
	chunkMerge                // the merge's: it parses it in order itself, or parses it ahead; a helper still parsing it returns the slot when done
)

// rowMeta is one row a worker parsed (its time read, its cells converted).
type rowMeta struct {
	line    int64 // line of the record, relative to the chunk's first
	endOff  int64 // offset just after the record, relative to the chunk
	endLine int64 // line after the record, relative
	ns      int64 // the worker's instant for the row's time
	t0, t1  int   // the time cell in chunk.tcells
	seg     int   // the row's readings are in chunk.segs[seg] …
	r0      int   // … from r0 (to the next row's r0 in the same segment, or the segment's end)
	nset    int   // cells set (row mode)
}

// event is a warning a worker deferred to the merge: a skipped row (bad,
// before rows[row]) or a bad cell of rows[row].
type event struct {
	row  int
	bad  bool
	line int64 // relative to the chunk
	msg  string
}

// chunk is one slot of the pipeline: input bytes and what a parser made
// of them. Slots are reused; their buffers keep their capacity. The merge
// writes the input fields before it publishes the slot as chunkQueued;
// the output fields belong to whoever moved the state from chunkQueued.
//
// A worker's readings go into segments of the sequential reader's batch
// size (batchReading plus one row: segCap), a new one begun at the first
// row that finds the current one at batchReading, so a batch the merge
// sends is (a part of) one segment. When the consumer owns what it is
// sent (Run), the merge hands each segment over whole and clears its
// entry; the worker then takes the next from the batches the consumer
// handed back (batchPool), which are all of that size: a steady read
// allocates none. When batches are reused after emit (ReadStream), the
// slot keeps its segments (segs[len:cap] too) from one chunk to the next.
type chunk struct {
	buf   []byte
	data  []byte // whole records (the last chunk: the rest of the stream)
	final bool   // the last chunk of the stream
	err   error  // a read error after data
	state atomic.Int32

	rows     []rowMeta
	events   []event
	tcells   []byte
	segs     [][]collector.Reading // the readings; an entry is nil once handed to the consumer
	vals     []float64
	qual     []collector.Quality
	set      []bool
	consumed int64 // bytes of data read as records
	lines    int64 // lines consumed
	open     bool  // the last record had no terminator
}

// pipe is what the merge and the helpers share: free slots (returned by
// the merge, or by a helper whose chunk the merge took back) and the
// chunks offered to helpers, in file order.
type pipe struct {
	free, work chan *chunk
	stop       atomic.Bool // the merge has ended: helpers claim no more
}

// workerCount is how many goroutines parse chunks for this stream, or 1
// for the sequential reader: long files (their rows are short and the
// point-name lookup is per row), one CPU, or a stream already read whole
// into the scanner that fits one chunk.
func (p *parser) workerCount(sc *scanner) int {
	if p.f.layout != LayoutWide {
		return 1
	}
	w := p.f.workers
	if w <= 0 {
		w = runtime.GOMAXPROCS(0)
	}
	if w > 1 && !sc.eof && sc.end-sc.start <= p.chunkSize() {
		// A small file ends here. An error is kept for the sequential
		// reader's next fill.
		if err := sc.fill(); err != nil {
			sc.readErr = err
			return 1
		}
	}
	if sc.eof && sc.end-sc.start <= p.chunkSize() {
		return 1
	}
	return w
}

func (p *parser) chunkSize() int {
	if p.f.chunkBytes > 0 {
		return p.f.chunkBytes
	}
	return defaultChunkBytes
}

// readRowsParallel is readRows with workers goroutines parsing: the
// caller's and workers-1 helpers.
func (p *parser) readRowsParallel(ctx context.Context, sc *scanner, emit emitFunc, workers int) error {
	helpers := workers - 1
	// Two slots per helper (the one it parses, the next offered to it) and
	// two for the merge (the chunk it delivers or parses, one read ahead):
	// with every helper holding a slot the merge still has two.
	slots := 2*helpers + 2
	pl := &pipe{free: make(chan *chunk, slots), work: make(chan *chunk, slots)}
	for range slots {
		c, _ := p.getSlot()
		c.state.Store(chunkMerge)
		pl.free <- c
	}
	final := sc.final
	var wg sync.WaitGroup
	for range helpers {
		w := p.worker()
		wg.Add(1)
		go func() {
			defer wg.Done()
			for c := range pl.work {
				if pl.stop.Load() || !c.state.CompareAndSwap(chunkQueued, chunkParsing) {
					continue // taken by the merge (or a stale offer of a refilled slot)
				}
				w.parseChunk(c, final)
				if !c.state.CompareAndSwap(chunkParsing, chunkParsed) {
					pl.free <- c // the merge parsed it itself meanwhile
				}
			}
		}()
	}
	rd := newChunkReader(sc, p.chunkSize())
	err := p.merge(ctx, sc, pl, rd, emit)
	pl.stop.Store(true)
	close(pl.work)
	wg.Wait()
	if p.slots != nil {
		// Every slot is free now, or still held by the merge's queue
		// (an ended read): all are the merge's.
		for len(pl.free) > 0 {
			p.slots.Put(<-pl.free)
		}
		for _, c := range rd.queued {
			p.slots.Put(c)
		}
	}
	return err
}

// getSlot returns a pooled chunk slot or a new one.
func (p *parser) getSlot() (*chunk, bool) {
	if p.slots != nil {
		if c, ok := p.slots.Get().(*chunk); ok {
			return c, true
		}
	}
	return &chunk{}, false
}

// worker returns a parser for one worker goroutine: the header's mapping,
// its own buffers and time parser.
func (p *parser) worker() *parser {
	tp, _ := newTimeParser(p.f.timeFormat, p.f.loc) // the format was checked by newParser
	w := &parser{f: p.f, pts: p.pts, file: p.file, tp: tp, ncols: p.ncols, timeCol: p.timeCol,
		cols: p.cols, reuse: p.reuse, pool: p.pool}
	if p.rowFn != nil {
		w.rowFn = func(Row) error { return nil } // row mode; commitRow fills the chunk
	}
	return w
}

// chunkReader cuts the stream, starting with what the scanner holds after
// the header, into chunks (the merge's goroutine calls it).
type chunkReader struct {
	sc      *scanner
	size    int
	held    []byte // what the scanner held after the header, not yet cut
	heldEOF bool
	carry   []byte // the start of the next chunk's first record
	spare   []byte
	eof     bool
	done    bool     // the last chunk (or one with a read error) is out
	queued  []*chunk // the merge's queue, in file order
}

func newChunkReader(sc *scanner, size int) *chunkReader {
	return &chunkReader{sc: sc, size: size, held: sc.buf[sc.start:sc.end], heldEOF: sc.eof}
}

func (rd *chunkReader) more(b []byte) (int, error) {
	switch {
	case len(rd.held) > 0:
		n := copy(b, rd.held)
		rd.held = rd.held[n:]
		return n, nil
	case rd.heldEOF:
		return 0, io.EOF
	}
	return rd.sc.r.Read(b)
}

// fill reads the next chunk into c.
func (rd *chunkReader) fill(c *chunk) {
	c.err, c.final = nil, false
	buf := c.buf[:cap(c.buf)]
	if len(buf) < rd.size || len(buf) < len(rd.carry) {
		buf = make([]byte, max(rd.size, len(rd.carry)))
	}
	n := copy(buf, rd.carry)
	cut := 0
	for {
		for n < len(buf) && !rd.eof && c.err == nil {
			m, err := rd.more(buf[n:])
			n += m
			if err == io.EOF {
				rd.eof = true
			} else if err != nil {
				c.err = err
			}
		}
		if rd.eof && c.err == nil {
			cut, c.final = n, true
			break
		}
		if cut = recordsEnd(buf[:n], rd.sc.quote); cut > 0 || c.err != nil {
			break
		}
		if len(buf) >= MaxRecordBytes {
			c.err = errRecordTooLong
			break
		}
		nb := make([]byte, min(2*len(buf), MaxRecordBytes))
		copy(nb, buf[:n])
		buf = nb
	}
	c.buf, c.data = buf, buf[:cut]
	// The rest starts the next chunk; copied, as this buffer goes to a helper.
	rd.spare = append(rd.spare[:0], buf[cut:n]...)
	rd.carry = rd.spare
	rd.done = c.final || c.err != nil
}

// merge runs the pipeline on the caller's goroutine (see the top of the
// file) and delivers the rows as the sequential reader would.
func (p *parser) merge(ctx context.Context, sc *scanner, pl *pipe, rd *chunkReader, emit emitFunc) error {
	var ahead *parser // parses chunks ahead of the merge, as a helper
	mode := newModeChooser(p.f.modeChunks, p.modes)
	defer mode.save()
	for {
		// Read into every free slot and offer the chunks to the helpers.
		for !rd.done {
			var c *chunk
			if len(rd.queued) == 0 {
				c = <-pl.free
			} else {
				select {
				case c = <-pl.free:
				default:
				}
			}
			if c == nil {
				break
			}
			rd.fill(c)
			rd.queued = append(rd.queued, c)
			c.state.Store(chunkQueued)
			if mode.solo {
				continue // the merge parses it
			}
			select {
			case pl.work <- c:
			default: // offers of slots refilled since fill the channel: the merge parses this one
			}
		}
		if len(rd.queued) == 0 {
			break
		}
		c := rd.queued[0]
		var consumed, lines int64
		var open, mine bool
		var err error
		switch c.state.Load() {
		case chunkQueued:
			if !c.state.CompareAndSwap(chunkQueued, chunkMerge) {
				continue // a helper claimed it just now
			}
			consumed, lines, open, err = p.seqChunk(c, sc, emit)
			mine = true
		case chunkParsed:
			if p.pool != nil && !p.reuse {
				// Room in the pool for what the slots may hold at once.
				p.pool.reserve(batchPoolSize + cap(pl.free)*len(c.segs))
			}
			err = p.mergeChunk(c, sc.offset, sc.line, emit)
			consumed, lines, open = c.consumed, c.lines, c.open
			mine = true
		case chunkParsing:
			if a := firstQueued(rd.queued[1:]); a != nil {
				if a.state.CompareAndSwap(chunkQueued, chunkMerge) {
					if ahead == nil {
						ahead = p.worker()
					}
					ahead.parseChunk(a, sc.final)
					a.state.Store(chunkParsed)
				}
				continue
			}
			if !rd.done && len(pl.free) > 0 {
				continue // read one more first
			}
			if !c.state.CompareAndSwap(chunkParsing, chunkMerge) {
				continue // parsed just now
			}
			// The helper is a whole pipeline behind: take its chunk back.
			consumed, lines, open, err = p.seqChunk(c, sc, emit)
		default:
			return fmt.Errorf("%s: parallel reader: chunk at the queue's head in state %d (a bug)", p.file, c.state.Load())
		}
		if err == nil && c.err != nil {
			if errors.Is(c.err, errRecordTooLong) {
				err = fmt.Errorf("%s: line %d: %w", p.file, sc.line+lines, c.err)
			} else {
				err = fmt.Errorf("%s: %w", p.file, c.err)
			}
		}
		sc.offset, sc.line, sc.open = sc.offset+consumed, sc.line+lines, open
		mode.chunkDone(consumed)
		rd.queued = append(rd.queued[:0], rd.queued[1:]...)
		if mine {
			c.state.Store(chunkMerge)
			pl.free <- c
		}
		if err != nil {
			return err
		}
		if err := ctx.Err(); err != nil {
			return err
		}
	}
	p.st.DSTGapTimes, p.st.RepeatedTimes = p.tp.gaps, p.tp.repeated
	return nil
}

// defaultModeChunks is the length, in chunks, of the windows over which
// the merge measures its throughput with and without helpers (about 8 MB:
// several of the system scheduler's time slices at the rates of either).
const defaultModeChunks = 128

// modeChooser decides, window by window, whether the merge offers chunks
// to the helpers (parallel) or parses every chunk itself (solo, which is
// the sequential reader on chunks). Helpers pay when the machine has a
// spare CPU for them; when it has none (every core busy with other work,
// or the system sharing CPU time per process group) they only add their
// overhead. So the merge measures the wall-clock rate (bytes per second)
// of each mode over a window, keeps the faster one, and measures the
// other again every exploreEvery windows, as the load changes: an
// explore-then-exploit rule (the ε-greedy strategy of the multi-armed
// bandit; R. S. Sutton and A. G. Barto, "Reinforcement Learning", 2nd ed.,
// MIT Press 2018, §2.2) with a fixed schedule instead of random draws.
// The rate is measured over the window's last three quarters. A
// mode's rate is the mean of its last measurements, weighted 1/2 to the
// newest (an exponentially weighted moving average); the source keeps the
// rates from one read to the next (modeRates).
type modeChooser struct {
	solo    bool
	chunks  int // per window
	n       int // chunks delivered in this window
	bytes   int64
	t0      time.Time
	rate    [2]float64 // bytes per second: [parallel, solo]; 0 not measured
	windows int        // windows since the last exploration
	keep    *modeRates
	now     func() time.Time
}

// modeRates is what a source's reads have measured (shared by them).
type modeRates struct {
	mu   sync.Mutex
	rate [2]float64
}

// exploreEvery is how many windows the faster mode runs before the other
// is measured again (its cost: at most 1/exploreEvery of the difference).
const exploreEvery = 8

func newModeChooser(chunks int, keep *modeRates) *modeChooser {
	if chunks <= 0 {
		chunks = defaultModeChunks
	}
	m := &modeChooser{chunks: chunks, t0: time.Now(), keep: keep, now: time.Now}
	if keep != nil {
		keep.mu.Lock()
		m.rate = keep.rate
		keep.mu.Unlock()
		m.solo = m.rate[1] > m.rate[0]
	}
	return m
}

// save hands the rates to the next read of the source.
func (m *modeChooser) save() {
	if m.keep != nil {
		m.keep.mu.Lock()
		m.keep.rate = m.rate
		m.keep.mu.Unlock()
	}
}

// chunkDone counts a delivered chunk of the given bytes and, at the end
// of a window, chooses the next window's mode.
func (m *modeChooser) chunkDone(bytes int64) {
	m.n++
	if m.n <= m.chunks/4 {
		// The window's first quarter is not measured: the pipeline fills
		// or drains from the last mode (and slots are made on a first read).
		if m.n == m.chunks/4 {
			m.t0 = m.now()
		}
		return
	}
	m.bytes += bytes
	if m.n < m.chunks {
		return
	}
	now := m.now()
	if d := now.Sub(m.t0).Seconds(); d > 0 {
		r, k := float64(m.bytes)/d, b2i(m.solo)
		if m.rate[k] > 0 {
			r = (r + m.rate[k]) / 2
		}
		m.rate[k] = r
	}
	m.n, m.bytes, m.t0 = 0, 0, now
	other := !m.solo
	switch {
	case m.rate[b2i(other)] == 0: // never measured
		m.solo = other
	case m.solo != (m.rate[1] > m.rate[0]): // the other is faster
		m.solo, m.windows = other, 0
	default:
		if m.windows++; m.windows >= exploreEvery {
			m.solo, m.windows = other, 0
		}
	}
}

// firstQueued returns the first chunk of q no one has claimed, or nil.
func firstQueued(q []*chunk) *chunk {
	for _, c := range q {
		if c.state.Load() == chunkQueued {
			return c
		}
	}
	return nil
}

// seqChunk parses c in file order on the merge's goroutine, exactly as
// the sequential reader does (its batch, its time parser, its warnings),
// from the stream position sc is at. It writes nothing into c: a helper
// may still be parsing the same bytes into it. It returns how much of c
// it consumed.
func (p *parser) seqChunk(c *chunk, sc *scanner, emit emitFunc) (consumed, lines int64, open bool, err error) {
	cs := &scanner{buf: c.data, end: len(c.data), eof: true, final: sc.final || !c.final, quote: sc.quote,
		offset: sc.offset, line: sc.line}
	for {
		rec, line, quoted, err := cs.next()
		if err != nil {
			break // io.EOF: a slice scanner never reads
		}
		if len(rec) == 0 {
			continue
		}
		p.wideRow(rec, line, quoted)
		if p.rowErr != nil {
			return 0, 0, false, p.rowErr
		}
		if len(p.batch) >= p.f.batchReading {
			if err := p.flush(cs, emit); err != nil {
				return 0, 0, false, err
			}
		}
	}
	err = p.flush(cs, emit)
	return cs.offset - sc.offset, cs.line - sc.line, cs.open, err
}

// recordsEnd returns the length of the longest prefix of b made of whole
// records (ending in a line break outside quotes), 0 if there is none.
func recordsEnd(b []byte, quote byte) int {
	if bytes.IndexByte(b, quote) < 0 {
		return bytes.LastIndexByte(b, '\n') + 1
	}
	end, odd, pos := 0, false, 0
	for {
		i := bytes.IndexByte(b[pos:], '\n')
		if i < 0 {
			return end
		}
		if bytes.Count(b[pos:pos+i], []byte{quote})%2 == 1 {
			odd = !odd
		}
		pos += i + 1
		if !odd {
			end = pos
		}
	}
}

// parseChunk parses c's records: rows into c (see parser.out), nothing
// judged that needs earlier rows.
func (p *parser) parseChunk(c *chunk, final bool) {
	c.rows, c.events, c.tcells = c.rows[:0], c.events[:0], c.tcells[:0]
	c.vals, c.qual, c.set = c.vals[:0], c.qual[:0], c.set[:0]
	c.segs = c.segs[:0]
	p.batch = nil // rowTime begins the first segment
	if p.rowFn != nil {
		p.ensureRow()
	}
	p.out = c
	// Each chunk starts without a previous time, so what a worker gives a
	// repeated hour depends on the chunk only (the merge corrects it).
	p.tp.hasPrev, p.tp.rawOK = false, false
	sc := &scanner{buf: c.data, end: len(c.data), eof: true, final: final || !c.final, quote: '"'}
	for {
		rec, line, quoted, err := sc.next()
		if err != nil {
			break // io.EOF: a slice scanner never reads
		}
		if len(rec) == 0 {
			continue
		}
		n := len(c.rows)
		p.wideRow(rec, line, quoted)
		if len(c.rows) > n {
			r := &c.rows[n]
			r.endOff, r.endLine = sc.consumed(), sc.line
		}
	}
	p.out = nil
	if p.batch != nil {
		c.segs = append(c.segs, p.batch)
		p.batch = nil
	}
	c.consumed, c.lines, c.open = sc.consumed(), sc.line, sc.open
}

// segCap is the capacity of a worker's segment of readings: the
// sequential reader's batch (ensureBatch), so that the batches of either
// path fit the other's requests to the pool.
func (p *parser) segCap() int { return max(p.f.batchReading+len(p.cols), len(p.cols)) }

// nextSeg ends the worker's current segment (p.batch) and begins the next
// of c: the slot's own from an earlier chunk, a handed-back batch, or a
// new one.
func (p *parser) nextSeg(c *chunk) {
	if p.batch != nil {
		c.segs = append(c.segs, p.batch)
		p.batch = nil
	}
	n := p.segCap()
	if k := len(c.segs); k < cap(c.segs) {
		if s := c.segs[:k+1][k]; cap(s) >= n {
			p.batch = s[:0]
		}
	}
	if p.batch == nil && !p.reuse && p.pool != nil {
		p.batch = p.pool.get(n)
	}
	if p.batch == nil {
		p.batch = make([]collector.Reading, 0, n)
	}
}

// mergeChunk delivers one chunk; base and line are the stream offset and
// line number of its start. A batch is the rows of one segment since the
// last batch sent from it, up to the segment's end or the first row the
// merge rejects; the chunk's last batch carries its end.
func (p *parser) mergeChunk(c *chunk, base, line int64, emit emitFunc) error {
	ev := c.events
	e := 0
	rowMode := p.rowFn != nil
	n := len(p.cols)
	if rowMode {
		p.ensureRow()
	}
	give := !p.reuse            // the consumer owns what it is sent
	si := -1                    // the segment of the pending batch …
	var seg []collector.Reading // … (c.segs[si], kept here once its entry is cleared)
	bs := 0                     // start of the pending batch in seg
	var lastEnd, lastLine int64 // end of the last row delivered, relative
	send := func(b []collector.Reading, off, ln int64) error {
		if give && si >= 0 && len(b) > 0 {
			c.segs[si] = nil // handed over: the slot never writes it again
		}
		p.st.Readings += int64(len(b))
		return emit(b, base+off, line+ln)
	}
	for i := range c.rows {
		rm := &c.rows[i]
		if !rowMode && rm.seg != si {
			si, seg, bs = rm.seg, c.segs[rm.seg], 0
		}
		r1 := len(seg)
		if i+1 < len(c.rows) && c.rows[i+1].seg == rm.seg {
			r1 = c.rows[i+1].r0
		}
		for ; e < len(ev) && ev[e].row == i && ev[e].bad; e++ {
			p.badRow(line+ev[e].line, ev[e].msg)
		}
		// The worker parsed these bytes, so this parse succeeds; it keeps
		// the time parser's state (repeated hours, counts) in file order.
		ns, err := p.tp.parse(c.tcells[rm.t0:rm.t1])
		ok := err == nil
		switch {
		case !ok:
			p.badRow(line+rm.line, err.Error())
		case p.hasT && ns < p.lastT:
			p.badRow(line+rm.line, fmt.Sprintf("time %s is before the previous row's %s (rows must be in time order)", formatNs(ns), formatNs(p.lastT)))
			ok = false
		}
		if !ok {
			for ; e < len(ev) && ev[e].row == i; e++ {
			}
			if !rowMode && rm.r0 > bs {
				// Capacity cut at the batch's end: the segment's later rows
				// are sent apart.
				if err := send(seg[bs:rm.r0:rm.r0], lastEnd, lastLine); err != nil {
					return err
				}
			}
			bs = r1
			continue
		}
		p.lastT, p.hasT = ns, true
		p.st.Rows++
		for ; e < len(ev) && ev[e].row == i; e++ {
			p.badCell(line+ev[e].line, ev[e].msg)
		}
		lastEnd, lastLine = rm.endOff, rm.endLine
		if rowMode {
			p.st.Readings += int64(rm.nset)
			k := i * n
			p.rowErr = p.rowFn(Row{At: time.Unix(0, ns).UTC(), Points: p.rowNames, Values: c.vals[k : k+n : k+n],
				Quality: c.qual[k : k+n : k+n], Set: c.set[k : k+n : k+n]})
			if p.rowErr != nil {
				return p.rowErr
			}
			continue
		}
		if ns != rm.ns {
			at := time.Unix(0, ns).UTC()
			for k := rm.r0; k < r1; k++ {
				seg[k].At = at
			}
		}
		if r1 == len(seg) && rm.seg+1 < len(c.segs) && r1 > bs {
			// The segment's last row, not the chunk's last segment: the
			// rest of the segment, with its capacity (nothing after it is
			// sent).
			if err := send(seg[bs:r1], rm.endOff, rm.endLine); err != nil {
				return err
			}
			bs = r1
		}
	}
	for ; e < len(ev); e++ {
		p.badRow(line+ev[e].line, ev[e].msg)
	}
	return send(seg[bs:], c.consumed, c.lines)
}
