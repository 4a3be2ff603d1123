//go:build !amd64 || purego

package trendfile

func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32) (int, int, int) {
	return scanWordsGo(rec, i, c, last, pat, vals, st, pos)
}

const haveScanWordsAsm = false
