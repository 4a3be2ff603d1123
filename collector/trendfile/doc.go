// Package trendfile reads CSV trend exports from a building automation
// system: one file, a directory, or a watched drop folder. It implements
// collector.Source and sends readings in SI units.
//
// Layouts. Wide (the default): a time column (default "timestamp", else
// the first column) then one column per point. Long: a time column, a
// point column ("point") and a value column ("value"). A column, or a long
// row's point name, matches a site point whose Kind is a trend column of
// this source and whose Column equals it, else a point whose Name equals
// it. Unmatched columns are ignored (one info line per file).
//
// Cells. Numbers ("72.5", "-3", "1.2e3"; with DecimalComma also "72,5")
// are converted from the point's Unit to SI with package units. Text
// states On/Off, active/inactive, true/false, yes/no, open/closed, … are 1
// and 0. A blank cell is "no sample at this time" (no reading: wide files
// merged from logs with different intervals leave blanks, and the last
// value holds). NaN, null, n/a give a Missing reading; error markers
// ("---", "?", "#N/A", "Error", …) a Bad one; unknown text a Bad one that
// is counted and warned.
//
// Time. RFC 3339 is the default and fast ("2024-01-15T08:00:00-06:00",
// 'T' or space, offset optional); "unix"/"unixms" epochs; or any Go
// reference layout. Times without an offset are wall-clock times in the
// source's TimeZone (else the site's, else UTC). A time in a spring-forward
// gap is read with the offset before the gap (it lands after the change);
// a time in a repeated fall-back hour is resolved by monotonic order in the
// file: the earlier instant while that is not before the previous row, else
// the later one. Rows must be in time order; a row going backwards is bad.
// A long file must therefore be sorted by time, not grouped by point.
//
// Bad rows (unreadable time, wrong field count, broken quoting) are
// skipped, counted in Stats and warned with file and line, rate-limited;
// the rows around them are kept.
//
// Reading is streaming with reusable buffers: memory does not grow with
// the file. Records without quotes take a fast path: one pass walks the
// row cell by cell, finding each cell's end and converting a plain decimal
// of up to seven characters from the same 64-bit word (SWAR, no branch on
// its digits, correctly rounded; in assembly on amd64, with the Go form as
// its tested reference), no allocation. On amd64 the assembly finds
// the delimiters 64 bytes at a time with SSE2 and converts in vector
// registers. With the Go form, a small memo of recently read cells
// (their bytes as the key) skips the conversion of repeated values and
// leaves itself out while fewer than half its lookups hit (exports whose
// values rarely repeat); the assembly converts faster than it looks up.
// Other cells go to the general cell parser. A record with a quote takes
// an RFC 4180 path (quoted delimiters, doubled quotes, line breaks inside
// quotes).
//
// Wide files are parsed on every CPU (Config.Workers, default GOMAXPROCS;
// a file that fits one chunk, a long file or Workers 1 is read by one
// goroutine). One goroutine cuts the stream into chunks of about 64 KiB at
// record boundaries (quote-aware, so a quoted line break is never cut),
// workers parse chunks independently, and an ordered merge in the caller's
// goroutine does all that depends on earlier rows: the time-order check,
// the repeated-hour choice, counts, warnings with their line numbers and
// rate limit, batches with their stream offsets. The readings, rows,
// counts and warnings are those of the sequential reader (tested, and
// fuzzed on chunks of a few bytes); only batch boundaries may differ. A
// fixed number of chunks is in flight, so memory stays constant.
//
// Drop folder. A directory with Watch is polled. A file is read when its
// size and modification time have held for SettleTime (files often arrive
// by transfer; names ending .part, .tmp, … and dot-files are skipped); a
// settled file is read to its end, an unterminated last line included. If
// such a file grows again, what follows is checked: a late line break is
// skipped; text continuing the line means the writer had paused mid-line
// longer than SettleTime, and the rest of that line is skipped with a
// warning. A file that keeps growing faster than SettleTime is not read
// until it pauses. A checkpoint per file, keyed by a hash of its first
// lines (so a renamed copy is recognised) and holding a byte offset on a
// record boundary, the time of the row before it and a hash of the bytes
// before it, lets a growing file continue where it stopped. With
// ProcessedDir a file read to its end is moved there; without one it
// stays, its checkpoint marking how far it was read.
//
// Restarts. Without Config.Progress the checkpoint moves past the batches
// the consumer's channel took, written at most every CheckpointEvery and at
// the end; readings still inside the assembler's lateness window at a stop
// are then lost, and a crash repeats up to CheckpointEvery of batches. With
// a collector.Progress shared with the assembler, a checkpoint only covers
// readings the accepted steps no longer need: the source keeps resume
// marks and each commit stores, per file, the last mark whose earlier rows
// all lie at or before watermark − lookback; a file is done (and moved)
// once that passes its last row. A restart, after a clean stop or kill -9
// at any moment, re-reads from there and the assembler skips the steps
// already accepted, so the steps after the watermark come out exactly as
// in an uninterrupted run (restart_test.go).
package trendfile
