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
// Reading is streaming with one reusable buffer: memory does not grow with
// the file. Records without quotes take a fast path (byte search for line
// breaks and delimiters, a no-allocation number and time parser); a record
// with a quote takes an RFC 4180 path (quoted delimiters, doubled quotes,
// line breaks inside quotes).
//
// Drop folder. A directory with Watch is polled. A file is read when its
// size and modification time have held for SettleTime (files often arrive
// by transfer; names ending .part, .tmp, … and dot-files are skipped). A
// checkpoint per file, keyed by a hash of its first lines (so a renamed
// copy is recognised) and holding the byte offset of the last record sent
// plus a hash of the bytes before it, lets a growing file continue where
// it stopped and a restart neither lose nor repeat rows: the checkpoint
// only moves past batches the consumer took, and is written at most every
// CheckpointEvery and always at the end or when ctx ends (a crash may
// repeat at most that interval's batches). With ProcessedDir a settled file
// is read to its end and moved there; without one only complete lines are
// read and the file stays, its checkpoint marking how far it was read.
package trendfile
