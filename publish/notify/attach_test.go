package notify

import (
	"bytes"
	"context"
	"encoding/base64"
	"io"
	"log/slog"
	"mime"
	"mime/multipart"
	"net/mail"
	"strings"
	"testing"
)

func TestQueueAttachmentsOnceWithIntactFiles(t *testing.T) {
	clk := &clock{t: t0}
	q := newMemQueue(clk.now)
	rs := &recSender{}
	n := New(testConfig(), "Larkspur Commons", q, rs, clk.now, slog.New(slog.NewTextHandler(io.Discard, nil)))
	ctx := context.Background()
	pdf := bytes.Repeat([]byte("%PDF-1.4 binary \x00\xff\x10 "), 500)
	csvData := []byte("rank,terminal\n1,VAV-1-07\n")
	atts := []Attachment{{Name: "risewatch-2026-W03.pdf", ContentType: "application/pdf", Data: pdf},
		{Name: "risewatch-2026-W03.csv", ContentType: "text/csv; charset=utf-8", Data: csvData}}
	for i := 0; i < 2; i++ { // a second run of the same schedule queues nothing new
		if err := n.QueueAttachments(ctx, "report/2026-W03", []string{"service@contractor.example"}, "Weekly coil report 2026-W03", "Two open faults.", atts); err != nil {
			t.Fatal(err)
		}
	}
	if sent, err := n.Deliver(ctx); sent != 1 || err != nil {
		t.Fatalf("sent %d, %v", sent, err)
	}
	m, err := mail.ReadMessage(bytes.NewReader(rs.mails[0].Data))
	if err != nil {
		t.Fatal(err)
	}
	mt, params, _ := mime.ParseMediaType(m.Header.Get("Content-Type"))
	if mt != "multipart/mixed" {
		t.Fatalf("Content-Type %q", mt)
	}
	mr := multipart.NewReader(m.Body, params["boundary"])
	got := map[string][]byte{}
	var text string
	for {
		p, err := mr.NextPart()
		if err == io.EOF {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		b, _ := io.ReadAll(p)
		if p.FileName() == "" {
			text = string(b)
			continue
		}
		if p.Header.Get("Content-Transfer-Encoding") == "base64" {
			b, err = decodeB64(b)
			if err != nil {
				t.Fatal(err)
			}
		}
		got[p.FileName()] = b
	}
	if !bytes.Equal(got["risewatch-2026-W03.pdf"], pdf) || !bytes.Equal(got["risewatch-2026-W03.csv"], csvData) {
		t.Errorf("attachments changed in transit: %d and %d bytes", len(got["risewatch-2026-W03.pdf"]), len(got["risewatch-2026-W03.csv"]))
	}
	if !strings.Contains(text, "Two open faults.") || !strings.Contains(text, "advisory only") {
		t.Errorf("text part: %q", text)
	}
	if err := n.QueueAttachments(ctx, "x", []string{"not an address"}, "s", "t", nil); err == nil {
		t.Error("bad recipient accepted")
	}
	big := []Attachment{{Name: "huge.pdf", Data: make([]byte, maxAttachBytes+1)}}
	if err := n.QueueAttachments(ctx, "y", []string{"a@b.example"}, "s", "t", big); err == nil {
		t.Error("oversized message accepted")
	}
}

func decodeB64(b []byte) ([]byte, error) {
	return base64.StdEncoding.DecodeString(strings.Join(strings.Fields(string(b)), ""))
}
