package notify

import (
	"context"
	"crypto/tls"
	"errors"
	"fmt"
	"net"
	"net/smtp"
	"strings"
	"time"
)

// Mail is one message ready for the wire.
type Mail struct {
	From string
	To   []string
	Data []byte // full RFC 5322 message with headers
}

// Sender delivers one message. SMTPSender is the real one.
type Sender interface {
	Send(ctx context.Context, m Mail) error
}

// SMTPSender sends over SMTP (RFC 5321) with STARTTLS (RFC 3207) and AUTH
// PLAIN (RFC 4616) or LOGIN. The password is read at send time from its
// configured source and is never logged or put in an error.
type SMTPSender struct {
	Cfg SMTPConfig
	// TLS is the client TLS configuration (nil: system roots, ServerName from Addr).
	TLS *tls.Config
}

// PermanentError marks a failure that retrying will not fix (5xx reply).
type PermanentError struct{ Err error }

func (e *PermanentError) Error() string { return e.Err.Error() }
func (e *PermanentError) Unwrap() error { return e.Err }

// Send delivers m, honouring ctx for the dial and overall deadline.
func (s *SMTPSender) Send(ctx context.Context, m Mail) error {
	host, _, err := net.SplitHostPort(s.Cfg.Addr)
	if err != nil {
		return fmt.Errorf("smtp %s: %w", s.Cfg.Addr, err)
	}
	timeout := s.Cfg.Timeout
	if timeout == 0 {
		timeout = 30 * time.Second
	}
	dctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	var d net.Dialer
	conn, err := d.DialContext(dctx, "tcp", s.Cfg.Addr)
	if err != nil {
		return fmt.Errorf("smtp %s: dial: %w", s.Cfg.Addr, err)
	}
	deadline, _ := dctx.Deadline()
	_ = conn.SetDeadline(deadline)
	c, err := smtp.NewClient(conn, host)
	if err != nil {
		conn.Close()
		return classify(s.Cfg.Addr, "greeting", err)
	}
	defer c.Close()
	if err := c.Hello("risewatch.localdomain"); err != nil {
		return classify(s.Cfg.Addr, "EHLO", err)
	}
	if s.Cfg.StartTLS != "off" {
		if ok, _ := c.Extension("STARTTLS"); ok {
			tc := s.TLS
			if tc == nil {
				tc = &tls.Config{}
			} else {
				tc = tc.Clone()
			}
			if tc.ServerName == "" {
				tc.ServerName = host
				if s.Cfg.ServerName != "" {
					tc.ServerName = s.Cfg.ServerName
				}
			}
			if tc.MinVersion == 0 {
				tc.MinVersion = tls.VersionTLS12
			}
			if err := c.StartTLS(tc); err != nil {
				return classify(s.Cfg.Addr, "STARTTLS", err)
			}
		} else if s.Cfg.StartTLS == "required" {
			return &PermanentError{fmt.Errorf("smtp %s: server does not offer STARTTLS and starttls is required", s.Cfg.Addr)}
		}
	}
	if s.Cfg.Auth != "none" && s.Cfg.Auth != "" {
		pw, err := s.Cfg.Password()
		if err != nil {
			return &PermanentError{err}
		}
		var a smtp.Auth
		switch s.Cfg.Auth {
		case "plain":
			a = smtp.PlainAuth("", s.Cfg.Username, pw, host)
		case "login":
			a = &loginAuth{user: s.Cfg.Username, pass: pw}
		}
		if err := c.Auth(a); err != nil {
			return classify(s.Cfg.Addr, "AUTH", err)
		}
	}
	if err := c.Mail(m.From); err != nil {
		return classify(s.Cfg.Addr, "MAIL FROM", err)
	}
	for _, to := range m.To {
		if err := c.Rcpt(to); err != nil {
			return classify(s.Cfg.Addr, "RCPT TO "+to, err)
		}
	}
	w, err := c.Data()
	if err != nil {
		return classify(s.Cfg.Addr, "DATA", err)
	}
	if _, err := w.Write(m.Data); err != nil {
		return classify(s.Cfg.Addr, "DATA write", err)
	}
	if err := w.Close(); err != nil {
		return classify(s.Cfg.Addr, "end of DATA", err)
	}
	return c.Quit()
}

// classify wraps err, marking 5xx replies permanent.
func classify(addr, stage string, err error) error {
	e := fmt.Errorf("smtp %s: %s: %w", addr, stage, err)
	var tp interface{ Temporary() bool }
	if errors.As(err, &tp) {
		return e
	}
	msg := err.Error()
	if len(msg) >= 3 && msg[0] == '5' && strings.IndexByte("0123456789", msg[1]) >= 0 {
		return &PermanentError{e}
	}
	return e
}

// loginAuth implements the LOGIN SASL mechanism (draft-murchison-sasl-login),
// which many mail servers still ask for. Like smtp.PlainAuth it refuses to
// send credentials over an unencrypted connection to a non-local host.
type loginAuth struct{ user, pass string }

func (a *loginAuth) Start(server *smtp.ServerInfo) (string, []byte, error) {
	if !server.TLS && !isLocal(server.Name) {
		return "", nil, errors.New("LOGIN auth refused on an unencrypted connection")
	}
	return "LOGIN", nil, nil
}

func (a *loginAuth) Next(fromServer []byte, more bool) ([]byte, error) {
	if !more {
		return nil, nil
	}
	prompt := strings.ToLower(strings.TrimSpace(string(fromServer)))
	switch {
	case strings.HasPrefix(prompt, "user"):
		return []byte(a.user), nil
	case strings.HasPrefix(prompt, "pass"):
		return []byte(a.pass), nil
	}
	return nil, fmt.Errorf("LOGIN auth: unexpected server challenge")
}

func isLocal(name string) bool {
	return name == "localhost" || name == "127.0.0.1" || name == "::1"
}
