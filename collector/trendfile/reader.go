package trendfile

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"strings"
	"sync"
	"time"

	"risewatch/collector"
)

// emitFunc receives a batch of readings that ends on a record boundary,
// with the stream offset and line number just after that record. The batch
// belongs to the receiver unless the parser reuses batches.
type emitFunc func(batch []collector.Reading, endOffset, nextLine int64) error

// mapped is one wide-layout column that feeds a point.
type mapped struct {
	col int
	pt  int32
}

// parser reads one trend file (or one continuation of it).
type parser struct {
	f    format
	pts  *pointTable
	file string
	warn *warner
	tp   *timeParser
	st   Stats

	ncols              int
	timeCol            int
	pointCol, valueCol int
	cols               []mapped
	fcols              []fastCol // cols with their conversions (wide fast path)
	rc                 rowCells  // the wide fast path's per-column scratch
	order              uint8     // inOrder: 0 not known yet, 1 yes, 2 no
	cellMemo           *[1 << memoBits]memoEntry
	memoUse            memoUse

	fields  [][]byte
	scratch []byte
	lastT   int64
	hasT    bool
	batch   []collector.Reading

	unknownSeen map[string]struct{}
	reuse       bool       // the batch is reused after emit returns (ReadStream)
	pool        *batchPool // batches handed back by Run's consumer (when !reuse)

	// out is set in a worker of the parallel reader (parallel.go): rows,
	// warnings and readings of the chunk being parsed go there, and the
	// ordered merge judges time order and logs.
	out   *chunk
	slots *sync.Pool // reusable chunks (*chunk), or nil
	modes *modeRates // the source's measured rates of the parallel reader's modes, or nil

	// Row mode (ReadRows): one callback per row instead of Readings.
	rowFn    func(Row) error
	rowErr   error
	rowNames []string // mapped columns' point names
	rowV     []float64
	rowQ     []collector.Quality
	rowSet   []bool
	one      [1]string
	oneV     [1]float64
	oneQ     [1]collector.Quality
	oneSet   [1]bool
}

// Row is one row of a trend file in SI: the values of the points it
// carries at one time. Set[i] is false for a blank cell (no sample). The
// slices are reused after the callback returns.
type Row struct {
	At      time.Time
	Points  []string // point names (PointRef.Name), the same for every row of a wide file
	Values  []float64
	Quality []collector.Quality
	Set     []bool
}

func (p *parser) ensureRow() {
	if p.rowV == nil {
		n := len(p.cols)
		p.rowV, p.rowQ, p.rowSet = make([]float64, n), make([]collector.Quality, n), make([]bool, n)
		for _, m := range p.cols {
			p.rowNames = append(p.rowNames, p.pts.points[m.pt].name)
		}
	}
}

// commitRow hands a parsed wide row on: to the row callback, or as
// Readings into the batch.
func (p *parser) commitRow(at time.Time) {
	if o := p.out; o != nil && p.rowFn != nil {
		n := 0
		for _, ok := range p.rowSet {
			n += b2i(ok)
		}
		o.rows[len(o.rows)-1].nset = n
		o.vals = append(o.vals, p.rowV...)
		o.qual = append(o.qual, p.rowQ...)
		o.set = append(o.set, p.rowSet...)
		return
	}
	p.st.Rows++
	if p.rowFn != nil {
		for _, ok := range p.rowSet {
			if ok {
				p.st.Readings++
			}
		}
		p.rowErr = p.rowFn(Row{At: at, Points: p.rowNames, Values: p.rowV, Quality: p.rowQ, Set: p.rowSet})
		return
	}
	p.ensureBatch(len(p.cols))
	for k, ok := range p.rowSet {
		if ok {
			p.batch = append(p.batch, collector.Reading{Point: p.rowNames[k], At: at, Value: p.rowV[k], Quality: p.rowQ[k]})
		}
	}
}

func newParser(f format, pts *pointTable, file string, log *slog.Logger) (*parser, error) {
	tp, err := newTimeParser(f.timeFormat, f.loc)
	if err != nil {
		return nil, err
	}
	return &parser{f: f, pts: pts, file: file, warn: newWarner(log, f.source, file), tp: tp,
		unknownSeen: map[string]struct{}{}}, nil
}

// split splits a record into p.fields, on the fast path when it has no quote.
func (p *parser) split(rec []byte, quoted bool) error {
	if !quoted {
		p.fields = splitFields(p.fields, rec, p.f.delim)
		return nil
	}
	var err error
	p.fields, p.scratch, err = splitQuoted(p.fields, p.scratch, rec, p.f.delim, '"')
	return err
}

// readHeader skips the configured rows and maps the header's columns.
func (p *parser) readHeader(sc *scanner) error {
	for i := 0; i < p.f.skipRows; i++ {
		if _, _, _, err := sc.next(); err != nil {
			return p.headerErr(err)
		}
	}
	rec, line, quoted, err := sc.next()
	if err != nil {
		return p.headerErr(err)
	}
	if line == 1 && len(rec) >= 3 && rec[0] == 0xEF && rec[1] == 0xBB && rec[2] == 0xBF {
		rec = rec[3:] // UTF-8 byte-order mark
	}
	if err := p.split(rec, quoted); err != nil {
		return fmt.Errorf("%s:%d: header: %w", p.file, line, err)
	}
	p.ncols = len(p.fields)
	find := func(name string) int {
		for i, h := range p.fields {
			if strings.EqualFold(string(trimSpace(h)), name) {
				return i
			}
		}
		return -1
	}
	p.timeCol = find(p.f.timeColumn)
	if p.timeCol < 0 {
		if p.f.timeSet {
			return fmt.Errorf("%s:%d: header has no time column %q", p.file, line, p.f.timeColumn)
		}
		p.timeCol = 0
	}
	if p.f.layout == LayoutLong {
		p.pointCol, p.valueCol = find(p.f.pointColumn), find(p.f.valueColumn)
		if p.pointCol < 0 || p.valueCol < 0 {
			return fmt.Errorf("%s:%d: long layout needs columns %q and %q in the header", p.file, line, p.f.pointColumn, p.f.valueColumn)
		}
		return nil
	}
	used := map[int32]bool{}
	var unmapped []string
	for c, h := range p.fields {
		if c == p.timeCol {
			continue
		}
		h = trimSpace(h)
		pt, ok := p.pts.lookup(h)
		if !ok || used[pt] {
			if len(h) > 0 {
				unmapped = append(unmapped, string(h))
			}
			continue
		}
		used[pt] = true
		p.cols = append(p.cols, mapped{col: c, pt: pt})
	}
	p.st.UnmappedColumn = int64(len(unmapped))
	if len(unmapped) > 0 {
		show := unmapped[:min(len(unmapped), 10)]
		p.warn.log.Info("trend file: columns that match no site point are ignored", "source", p.f.source,
			"file", p.file, "count", len(unmapped), "first", strings.Join(show, ", "))
	}
	if len(p.cols) == 0 {
		return fmt.Errorf("%s:%d: no column matches a point of source %s (a column matches a point's column name or its point name)", p.file, line, p.f.source)
	}
	return nil
}

func (p *parser) headerErr(err error) error {
	if errors.Is(err, io.EOF) {
		return fmt.Errorf("%s: %w", p.file, errNoHeader)
	}
	return fmt.Errorf("%s: reading header: %w", p.file, err)
}

var errNoHeader = errors.New("no complete header line yet")

// readRows parses records until EOF (or ctx ends), sending batches to emit
// on record boundaries. A bad row is counted, warned and skipped.
func (p *parser) readRows(ctx context.Context, sc *scanner, emit emitFunc) error {
	if w := p.workerCount(sc); w > 1 {
		return p.readRowsParallel(ctx, sc, emit, w)
	}
	n := 0
	for {
		rec, line, quoted, err := sc.next()
		if err == io.EOF {
			break
		}
		if err != nil {
			// Deliver the rows read before the error, then report it.
			return errors.Join(p.flush(sc, emit), fmt.Errorf("%s: %w", p.file, err))
		}
		if len(rec) == 0 {
			continue
		}
		if p.f.layout == LayoutLong {
			p.longRow(rec, line, quoted)
		} else {
			p.wideRow(rec, line, quoted)
		}
		if p.rowErr != nil {
			return p.rowErr
		}
		if len(p.batch) >= p.f.batchReading {
			if err := p.flush(sc, emit); err != nil {
				return err
			}
			if n++; n%8 == 0 && ctx.Err() != nil {
				return ctx.Err()
			}
		}
	}
	p.st.DSTGapTimes, p.st.RepeatedTimes = p.tp.gaps, p.tp.repeated
	return p.flush(sc, emit)
}

func (p *parser) flush(sc *scanner, emit emitFunc) error {
	b := p.batch
	if p.reuse {
		p.batch = p.batch[:0]
	} else {
		p.batch = nil
	}
	p.st.Readings += int64(len(b))
	return emit(b, sc.consumed(), sc.line)
}

func (p *parser) badRow(line int64, msg string) {
	if o := p.out; o != nil {
		o.events = append(o.events, event{row: len(o.rows), bad: true, line: line, msg: msg})
		return
	}
	p.st.BadRows++
	p.warn.warn(line, "row skipped: "+msg)
}

// badCell counts and warns a cell that is sent as bad.
func (p *parser) badCell(line int64, msg string) {
	if o := p.out; o != nil {
		o.events = append(o.events, event{row: len(o.rows) - 1, line: line, msg: msg})
		return
	}
	p.st.BadCells++
	p.warn.warn(line, msg)
}

// rowTime parses and checks the row's timestamp.
func (p *parser) rowTime(cell []byte, line int64) (time.Time, bool) {
	ns, err := p.tp.parse(cell)
	if err != nil {
		p.badRow(line, err.Error())
		return time.Time{}, false
	}
	if o := p.out; o != nil {
		// A worker cannot know the previous chunk's last time: the merge
		// checks the order and parses the time again in file order.
		t0 := len(o.tcells)
		o.tcells = append(o.tcells, cell...)
		if p.rowFn == nil && (p.batch == nil || len(p.batch) >= p.f.batchReading || cap(p.batch)-len(p.batch) < len(p.cols)) {
			p.nextSeg(o) // the row's readings start the next segment
		}
		o.rows = append(o.rows, rowMeta{line: line, ns: ns, t0: t0, t1: len(o.tcells), seg: len(o.segs), r0: len(p.batch)})
		return time.Unix(0, ns).UTC(), true
	}
	if p.hasT && ns < p.lastT {
		p.badRow(line, fmt.Sprintf("time %s is before the previous row's %s (rows must be in time order)", formatNs(ns), formatNs(p.lastT)))
		return time.Time{}, false
	}
	p.lastT, p.hasT = ns, true
	return time.Unix(0, ns).UTC(), true
}

// ensureBatch makes room in the batch for extra more readings.
func (p *parser) ensureBatch(extra int) {
	if p.batch == nil {
		n := max(p.f.batchReading+extra, extra)
		if !p.reuse && p.pool != nil {
			p.batch = p.pool.get(n)
		}
		if p.batch == nil {
			p.batch = make([]collector.Reading, 0, n)
		}
	}
	if cap(p.batch)-len(p.batch) < extra {
		p.batch = append(make([]collector.Reading, 0, len(p.batch)+p.f.batchReading+extra), p.batch...)
	}
}

// cell converts one cell of point pt; ok is false when it yields no
// reading (a blank cell).
func (p *parser) cell(b []byte, pt int32, line int64, col int) (v float64, q collector.Quality, ok bool) {
	pi := &p.pts.points[pt]
	v, kind := parseCell(b, p.f.decComma)
	switch kind {
	case cellBlank:
		return 0, collector.Missing, false
	case cellNumber, cellState:
		switch {
		case pi.binary:
			if v != 0 {
				v = 1
			}
		case kind == cellNumber:
			v = v*pi.scale + pi.offset // numbers get the unit; text states stay 0/1
		}
		return v, collector.Good, true
	case cellInvalid:
		p.badCell(line, fmt.Sprintf("column %d (%s): %q is not a number or a known state; sent as bad", col+1, pi.name, b))
	}
	return 0, kind.quality(), true
}

func (p *parser) wideRow(rec []byte, line int64, quoted bool) {
	if !quoted && p.timeCol == 0 {
		p.wideFast(rec, line)
		return
	}
	p.wideSplit(rec, line, quoted)
}

// wideSplit is the general wide row: split into fields, each converted by
// the cell parser.
func (p *parser) wideSplit(rec []byte, line int64, quoted bool) {
	if err := p.split(rec, quoted); err != nil {
		p.badRow(line, err.Error())
		return
	}
	if len(p.fields) != p.ncols {
		if len(p.fields) < p.ncols || !allBlank(p.fields[p.ncols:]) {
			p.badRow(line, fmt.Sprintf("%d fields, the header has %d", len(p.fields), p.ncols))
			return
		}
	}
	at, ok := p.rowTime(p.fields[p.timeCol], line)
	if !ok {
		return
	}
	p.ensureRow()
	for k, m := range p.cols {
		p.rowV[k], p.rowQ[k], p.rowSet[k] = p.cell(p.fields[m.col], m.pt, line, m.col)
	}
	p.commitRow(at)
}

func (p *parser) longRow(rec []byte, line int64, quoted bool) {
	if err := p.split(rec, quoted); err != nil {
		p.badRow(line, err.Error())
		return
	}
	if len(p.fields) <= max(p.timeCol, p.pointCol, p.valueCol) {
		p.badRow(line, fmt.Sprintf("%d fields, want at least %d", len(p.fields), max(p.timeCol, p.pointCol, p.valueCol)+1))
		return
	}
	name := trimSpace(p.fields[p.pointCol])
	pt, ok := p.pts.lookup(name)
	if !ok {
		p.st.UnknownPoints++
		if _, seen := p.unknownSeen[string(name)]; !seen && len(p.unknownSeen) < 100 {
			p.unknownSeen[string(name)] = struct{}{}
			p.warn.warn(line, fmt.Sprintf("point %q is not in the site; its rows are ignored", name))
		}
		return
	}
	at, ok := p.rowTime(p.fields[p.timeCol], line)
	if !ok {
		return
	}
	v, q, ok := p.cell(p.fields[p.valueCol], pt, line, p.valueCol)
	if p.rowFn != nil {
		p.one[0], p.oneV[0], p.oneQ[0], p.oneSet[0] = p.pts.points[pt].name, v, q, ok
		p.st.Rows++
		if ok {
			p.st.Readings++
		}
		p.rowErr = p.rowFn(Row{At: at, Points: p.one[:], Values: p.oneV[:], Quality: p.oneQ[:], Set: p.oneSet[:]})
		return
	}
	p.ensureBatch(1)
	if ok {
		p.batch = append(p.batch, collector.Reading{Point: p.pts.points[pt].name, At: at, Value: v, Quality: q})
	}
	p.st.Rows++
}

func allBlank(fs [][]byte) bool {
	for _, f := range fs {
		if len(trimSpace(f)) > 0 {
			return false
		}
	}
	return true
}
