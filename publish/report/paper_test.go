package report

import (
	"bytes"
	"regexp"
	"testing"
)

// mediaBox is a PDF page's size in points (1/72 in).
var mediaBox = regexp.MustCompile(`/MediaBox \[0 0 ([0-9.]+) ([0-9.]+)\]`)

// TestPDFPaper: the page size follows Input.Paper, and without it the unit
// order (Letter with IP units, A4 with SI). Letter is 8.5 × 11 in = 612 ×
// 792 pt; A4 210 × 297 mm = 595.28 × 841.89 pt (ISO 216; 1 pt = 1/72 in).
func TestPDFPaper(t *testing.T) {
	for _, c := range []struct {
		paper string
		ip    bool
		w     string
	}{{"", true, "612.00"}, {"", false, "595.28"}, {PaperLetter, false, "612.00"}, {PaperA4, true, "595.28"}} {
		in := testInput()
		in.IP, in.Paper = c.ip, c.paper
		var b bytes.Buffer
		if err := WritePDF(&b, in); err != nil {
			t.Fatal(err)
		}
		m := mediaBox.FindSubmatch(b.Bytes())
		if m == nil {
			t.Fatalf("paper %q: no MediaBox in the PDF", c.paper)
		}
		if string(m[1]) != c.w {
			t.Errorf("paper %q, ip %v: page %s × %s pt, want width %s", c.paper, c.ip, m[1], m[2], c.w)
		}
	}
	in := testInput()
	in.Paper = "legal"
	if err := WritePDF(&bytes.Buffer{}, in); err == nil {
		t.Error("paper legal accepted")
	}
}
