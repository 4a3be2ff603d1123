package daemon

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"net/mail"
	"os"
	"path/filepath"
	"strings"

	"risewatch/publish/notify"
)

// SpoolSender is a notify.Sender that writes each message as an .eml file
// (RFC 5322, as it would go on the wire) into Dir. The file is written under
// a temporary name, synced and renamed, so a reader never sees half a
// message. The name derives from the Message-ID, so a re-delivery after a
// crash overwrites the same file instead of adding a second one.
type SpoolSender struct{ Dir string }

// Send writes m into the spool.
func (s SpoolSender) Send(ctx context.Context, m notify.Mail) error {
	if err := ctx.Err(); err != nil {
		return err
	}
	if err := os.MkdirAll(s.Dir, 0o755); err != nil {
		return fmt.Errorf("mail spool: %w", err)
	}
	id := ""
	if msg, err := mail.ReadMessage(bytes.NewReader(m.Data)); err == nil {
		id = strings.Trim(msg.Header.Get("Message-Id"), "<>")
	}
	if id == "" {
		h := sha256.Sum256(m.Data)
		id = hex.EncodeToString(h[:12])
	}
	name := strings.Map(func(r rune) rune {
		if r == '/' || r == '\\' || r == 0 || r == ':' {
			return '_'
		}
		return r
	}, id) + ".eml"
	var head bytes.Buffer
	fmt.Fprintf(&head, "X-Spool-From: %s\r\nX-Spool-To: %s\r\n", m.From, strings.Join(m.To, ", "))
	tmp, err := os.CreateTemp(s.Dir, ".spool-*.tmp")
	if err != nil {
		return fmt.Errorf("mail spool: %w", err)
	}
	_, err = tmp.Write(append(head.Bytes(), m.Data...))
	if err == nil {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp.Name(), 0o644)
	}
	if err == nil {
		err = os.Rename(tmp.Name(), filepath.Join(s.Dir, name))
	}
	if err != nil {
		os.Remove(tmp.Name())
		return fmt.Errorf("mail spool: %w", err)
	}
	return nil
}
