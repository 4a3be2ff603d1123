//go:build !amd64 || purego

package trendfile

func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (i1, c1, others, hits, looked int) {
	return scanWordsGo(rec, i, c, last, pat, vals, st, pos, memo)
}

const haveScanWordsAsm = false
