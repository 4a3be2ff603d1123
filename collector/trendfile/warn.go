package trendfile

import (
	"fmt"
	"log/slog"
	"time"
)

// Stats counts what a source read and what it skipped.
type Stats struct {
	Files          int64 // files (or file continuations) read
	Rows           int64 // data rows accepted
	Readings       int64 // readings emitted
	BadRows        int64 // rows skipped: time unreadable or going backwards, wrong field count, bad quoting
	BadCells       int64 // cells that were neither a number, a state, a blank nor a known marker (sent as Bad)
	UnknownPoints  int64 // long-layout rows naming a point the site does not have
	DSTGapTimes    int64 // wall-clock times in a spring-forward gap (read with the earlier offset)
	RepeatedTimes  int64 // wall-clock times in a repeated hour (resolved by file order)
	UnmappedColumn int64 // wide-layout columns that match no point (per file)
}

func (s *Stats) add(o Stats) {
	s.Files += o.Files
	s.Rows += o.Rows
	s.Readings += o.Readings
	s.BadRows += o.BadRows
	s.BadCells += o.BadCells
	s.UnknownPoints += o.UnknownPoints
	s.DSTGapTimes += o.DSTGapTimes
	s.RepeatedTimes += o.RepeatedTimes
	s.UnmappedColumn += o.UnmappedColumn
}

// warner logs problems in one file, rate-limited: the first few one by one,
// then at most one line per interval saying how many were not shown, and a
// summary at the end of the file.
type warner struct {
	log        *slog.Logger
	source     string
	file       string
	burst      int
	every      time.Duration
	now        func() time.Time
	shown      int
	suppressed int64
	total      int64
	firstLine  int64
	last       time.Time
}

func newWarner(log *slog.Logger, source, file string) *warner {
	return &warner{log: log, source: source, file: file, burst: 10, every: 10 * time.Second, now: time.Now}
}

// warn records one problem at line; msg says what is wrong.
func (w *warner) warn(line int64, msg string) {
	w.total++
	if w.firstLine == 0 {
		w.firstLine = line
	}
	if w.shown < w.burst {
		w.shown++
		w.log.Warn("trend file: "+msg, "source", w.source, "file", w.file, "line", line)
		return
	}
	now := w.now()
	if now.Sub(w.last) < w.every {
		w.suppressed++
		return
	}
	w.last = now
	w.log.Warn("trend file: "+msg, "source", w.source, "file", w.file, "line", line,
		"not_shown", w.suppressed)
	w.suppressed = 0
}

// summary logs the file's total when anything was wrong.
func (w *warner) summary(st Stats) {
	if w.total == 0 {
		return
	}
	w.log.Warn(fmt.Sprintf("trend file: %d problems (first at line %d)", w.total, w.firstLine),
		"source", w.source, "file", w.file, "bad_rows", st.BadRows, "bad_cells", st.BadCells,
		"unknown_points", st.UnknownPoints)
}
