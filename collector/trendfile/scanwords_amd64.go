//go:build !purego

package trendfile

// scanWordsAsm is scanWordsGo in assembly (scanwords_amd64.s). It needs
// last ≤ len(vals), len(st), len(pos) and 0 ≤ i; scanWords checks.
//
//go:noescape
func scanWordsAsm(rec []byte, i, c, last int, pat uint64, vals []float64, st []uint8, pos []int32, memo *[1 << memoBits]memoEntry) (i1, c1, others, hits, looked int)

const haveScanWordsAsm = true
