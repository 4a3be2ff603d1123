package influx

import (
	"bytes"
	"compress/gzip"
	"fmt"
	"hash/fnv"
	"io"
	"strconv"
)

// Outbox payloads are gzip-compressed line protocol: an hour's outage of a
// 2,000-terminal site is about 120 steps × 2,000 lines × 400 B ≈ 100 MB raw,
// and line protocol compresses roughly tenfold.

func encodePayload(lines []byte) ([]byte, error) {
	var buf bytes.Buffer
	zw, err := gzip.NewWriterLevel(&buf, gzip.BestSpeed)
	if err != nil {
		return nil, err
	}
	if _, err := zw.Write(lines); err != nil {
		return nil, err
	}
	if err := zw.Close(); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// decodePayload returns the line protocol of a payload (compressed or, for
// hand-made entries, plain).
func decodePayload(p []byte) ([]byte, error) {
	if len(p) < 2 || p[0] != 0x1f || p[1] != 0x8b {
		return p, nil
	}
	zr, err := gzip.NewReader(bytes.NewReader(p))
	if err != nil {
		return nil, fmt.Errorf("payload: %w", err)
	}
	out, err := io.ReadAll(zr)
	if err != nil {
		return nil, fmt.Errorf("payload: %w", err)
	}
	return out, nil
}

// splitLines splits line protocol into lines without their newline.
func splitLines(p []byte) []string {
	var out []string
	for len(p) > 0 {
		i := bytes.IndexByte(p, '\n')
		if i < 0 {
			out = append(out, string(p))
			break
		}
		if i > 0 {
			out = append(out, string(p[:i]))
		}
		p = p[i+1:]
	}
	return out
}

// chunks splits line protocol into pieces of at most n lines.
func chunks(p []byte, n int) [][]byte {
	var out [][]byte
	for len(p) > 0 {
		end, count := 0, 0
		for end < len(p) && count < n {
			i := bytes.IndexByte(p[end:], '\n')
			if i < 0 {
				end = len(p)
				break
			}
			end += i + 1
			count++
		}
		out = append(out, p[:end])
		p = p[end:]
	}
	return out
}

func contentSum(p []byte) uint64 {
	h := fnv.New64a()
	h.Write(p)
	return h.Sum64()
}

func itoa(i int) string { return strconv.Itoa(i) }

func hex16(v uint64) string {
	s := strconv.FormatUint(v, 16)
	for len(s) < 16 {
		s = "0" + s
	}
	return s
}
