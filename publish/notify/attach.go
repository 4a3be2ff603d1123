package notify

import (
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"mime"
	"mime/multipart"
	"net/textproto"
	"strings"
	"time"
)

// Attachment is one file sent with a message (e.g. the weekly report PDF
// and its CSV work list).
type Attachment struct {
	Name        string // file name shown to the recipient
	ContentType string // e.g. "application/pdf", "text/csv; charset=utf-8"
	Data        []byte
}

// maxAttachBytes bounds one queued message (mail servers commonly refuse
// messages over 10-25 MB; base64 adds a third).
const maxAttachBytes = 15 << 20

// QueueAttachments composes a plain-text message with attachments to the
// given recipients and queues it on the same durable outbox as the alerts,
// so Deliver sends it with the same retries, quiet hours and exactly-once
// Message-ID. id names the message for de-duplication: queueing the same id
// again (a restart, a second run of the same schedule) changes nothing.
func (n *Notifier) QueueAttachments(ctx context.Context, id string, to []string, subject, text string, atts []Attachment) error {
	if len(to) == 0 {
		return errors.New("notify: attachments: no recipients")
	}
	for _, a := range to {
		if !strings.Contains(a, "@") || strings.ContainsAny(a, "\r\n<>") {
			return fmt.Errorf("notify: attachments: recipient %q is not an address", a)
		}
	}
	total := 0
	for _, a := range atts {
		total += len(a.Data)
	}
	if total > maxAttachBytes {
		return fmt.Errorf("notify: attachments: %d bytes exceed the %d-byte limit of one message", total, maxAttachBytes)
	}
	k := key("attach", id)
	now := n.now()
	data, err := n.cfg.composeAttach(k, to, now, subject, text, atts)
	if err != nil {
		return fmt.Errorf("notify: compose %q: %w", subject, err)
	}
	rec := mailRecord{Route: "attachments", To: to, Subject: subject, Data: data,
		NotBefore: n.cfg.Quiet.Release(now, n.cfg.Location)}
	b, err := json.Marshal(rec)
	if err != nil {
		return err
	}
	if err := n.q.Enqueue(ctx, k, ChannelMail, b); err != nil {
		return fmt.Errorf("notify: queue %q: %w", subject, err)
	}
	return nil
}

// composeAttach builds a multipart/mixed message: the text (quoted-printable,
// RFC 2045) followed by each attachment in base64 (RFC 2045 §6.8, 76-column
// lines) with a Content-Disposition file name (RFC 2183).
func (c *Config) composeAttach(k string, to []string, at time.Time, subj, text string, atts []Attachment) ([]byte, error) {
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	if err := writeQPPart(mw, "text/plain; charset=utf-8", []byte(text+"\n\n"+Advisory+"\n")); err != nil {
		return nil, err
	}
	for _, a := range atts {
		ct := a.ContentType
		if ct == "" {
			ct = "application/octet-stream"
		}
		h := textproto.MIMEHeader{}
		h.Set("Content-Type", ct)
		h.Set("Content-Transfer-Encoding", "base64")
		h.Set("Content-Disposition", mime.FormatMediaType("attachment", map[string]string{"filename": a.Name}))
		pw, err := mw.CreatePart(h)
		if err != nil {
			return nil, err
		}
		enc := base64.StdEncoding.EncodeToString(a.Data)
		for len(enc) > 76 {
			if _, err := pw.Write([]byte(enc[:76] + "\r\n")); err != nil {
				return nil, err
			}
			enc = enc[76:]
		}
		if _, err := pw.Write([]byte(enc + "\r\n")); err != nil {
			return nil, err
		}
	}
	if err := mw.Close(); err != nil {
		return nil, err
	}
	return c.envelope(k, to, at, subj, "multipart/mixed; boundary="+mw.Boundary(), body.Bytes()), nil
}
