// Package web is the dashboard built into the daemon: server-rendered HTML
// with inline SVG plots and no JavaScript build step. Pages: the site
// overview (terminals by state, faults ranked by cost, loop and AHU health),
// a page per terminal (observed against expected rise, valve command and
// airflow over time, the coil's data and calibration, fault history, and the
// acknowledge/snooze forms) and the collector health page.
//
// It binds to 127.0.0.1 by default. Bound anywhere else it refuses to start
// without a bearer token or basic-auth credentials, and serves TLS when given
// a certificate. State changes are POSTs protected against cross-site
// request forgery.
package web

import (
	"context"
	"crypto/hmac"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/hex"
	"errors"
	"fmt"
	"html/template"
	"log/slog"
	"net"
	"net/http"
	"net/url"
	"strings"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
)

// Point is one sample of a terminal's time series for plots.
type Point struct {
	At            time.Time
	ObservedRiseK float64
	ExpectedRiseK float64
	ValveFrac     float64
	AirflowM3s    float64
}

// SourceHealth is one collector's state for the health page.
type SourceHealth struct {
	Name, Kind  string
	LastSuccess time.Time // wall clock
	Reads       uint64
	Errors      map[string]uint64 // by kind
	LastError   string
	StalePoints int
	Points      int
}

// Backend is what the dashboard reads and the two things it changes.
type Backend interface {
	Site() *site.Site
	Faults(ctx context.Context) ([]rules.Transition, error) // current: open, acked or suppressed
	History(ctx context.Context, entity string, limit int) ([]rules.Transition, error)
	Latest(terminal int) (fdd.Evidence, bool)
	// Baseline is the terminal's baseline and whether it is still
	// learning (the zero Baseline with false when unknown).
	Baseline(terminal int) (fdd.Baseline, bool)
	Series(ctx context.Context, terminal int, from, to time.Time) ([]Point, error)
	Sources() []SourceHealth
	Ack(ctx context.Context, faultID, by, note string) error
	Snooze(ctx context.Context, faultID, by string, until time.Time, note string) error
	Now() time.Time
}

// Config configures the HTTP server.
type Config struct {
	Listen string // host:port; default 127.0.0.1:9470
	// Token, when set, is required as "Authorization: Bearer TOKEN" or once as
	// ?token=TOKEN (which sets a session cookie).
	Token string
	// BasicUser/BasicPassword enable HTTP basic auth.
	BasicUser, BasicPassword string
	TLSCert, TLSKey          string
	IP                       bool // IP units first
	// Wall is the wall clock the collectors page measures ages with
	// (SourceHealth.LastSuccess is wall-clock time even when Backend.Now
	// is a data clock); nil means time.Now.
	Wall func() time.Time
	// Extra handlers mounted beside the pages (e.g. "/metrics").
	Extra map[string]http.Handler
}

// DefaultListen is the loopback default.
const DefaultListen = "127.0.0.1:9470"

// Server is the dashboard.
type Server struct {
	cfg    Config
	b      Backend
	log    *slog.Logger
	secret []byte // CSRF and session HMAC key, random per process
	tmpl   *template.Template
	mux    *http.ServeMux
}

// New checks cfg (auth is required off loopback) and builds the server.
func New(cfg Config, b Backend, log *slog.Logger) (*Server, error) {
	if cfg.Listen == "" {
		cfg.Listen = DefaultListen
	}
	host, _, err := net.SplitHostPort(cfg.Listen)
	if err != nil {
		return nil, fmt.Errorf("web: listen %q: %w", cfg.Listen, err)
	}
	if !isLoopback(host) && cfg.Token == "" && (cfg.BasicUser == "" || cfg.BasicPassword == "") {
		return nil, fmt.Errorf("web: listening on %s (not loopback) needs a token or basic-auth credentials", cfg.Listen)
	}
	if (cfg.TLSCert == "") != (cfg.TLSKey == "") {
		return nil, errors.New("web: TLS needs both a certificate and a key")
	}
	if log == nil {
		log = slog.Default()
	}
	secret := make([]byte, 32)
	if _, err := rand.Read(secret); err != nil {
		return nil, err
	}
	s := &Server{cfg: cfg, b: b, log: log, secret: secret, tmpl: parseTemplates(cfg.IP)}
	s.routes()
	return s, nil
}

func isLoopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(host)
	return ip != nil && ip.IsLoopback()
}

func (s *Server) routes() {
	m := http.NewServeMux()
	m.HandleFunc("GET /{$}", s.overview)
	m.HandleFunc("GET /terminals/{id}", s.terminal)
	m.HandleFunc("GET /sources", s.sources)
	m.HandleFunc("GET /faults/{id}/ack", s.ackForm)
	m.HandleFunc("POST /faults/{id}/ack", s.ackPost)
	m.HandleFunc("GET /faults/{id}/snooze", s.snoozeForm)
	m.HandleFunc("POST /faults/{id}/snooze", s.snoozePost)
	m.HandleFunc("GET /healthz", func(w http.ResponseWriter, _ *http.Request) { _, _ = w.Write([]byte("ok\n")) })
	m.HandleFunc("/", s.notFound)
	for p, h := range s.cfg.Extra {
		m.Handle(p, h)
	}
	s.mux = m
}

// Handler returns the dashboard with authentication and security headers.
func (s *Server) Handler() http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("X-Frame-Options", "DENY")
		h.Set("Referrer-Policy", "same-origin")
		h.Set("Content-Security-Policy", "default-src 'none'; style-src 'unsafe-inline'; img-src 'self' data:; form-action 'self'; frame-ancestors 'none'")
		if r.URL.Path != "/healthz" && !s.authorized(w, r) {
			return
		}
		s.mux.ServeHTTP(w, r)
	})
}

const sessionCookie = "rw_session"

func (s *Server) sign(v string) string {
	m := hmac.New(sha256.New, s.secret)
	m.Write([]byte(v))
	return hex.EncodeToString(m.Sum(nil))
}

// authorized checks the token (header, ?token= or session cookie) or basic
// auth; loopback servers without credentials are open.
func (s *Server) authorized(w http.ResponseWriter, r *http.Request) bool {
	if s.cfg.Token == "" && s.cfg.BasicUser == "" {
		return true
	}
	eq := func(a, b string) bool { return subtle.ConstantTimeCompare([]byte(a), []byte(b)) == 1 }
	if s.cfg.Token != "" {
		if a := r.Header.Get("Authorization"); strings.HasPrefix(a, "Bearer ") && eq(strings.TrimPrefix(a, "Bearer "), s.cfg.Token) {
			return true
		}
		if c, err := r.Cookie(sessionCookie); err == nil && eq(c.Value, s.sign("session")) {
			return true
		}
		if t := r.URL.Query().Get("token"); t != "" && eq(t, s.cfg.Token) {
			http.SetCookie(w, &http.Cookie{Name: sessionCookie, Value: s.sign("session"), Path: "/", HttpOnly: true,
				SameSite: http.SameSiteStrictMode, Secure: s.cfg.TLSCert != ""})
			q := r.URL.Query()
			q.Del("token")
			r.URL.RawQuery = q.Encode()
			http.Redirect(w, r, r.URL.String(), http.StatusSeeOther)
			return false
		}
	}
	if s.cfg.BasicUser != "" {
		if u, p, ok := r.BasicAuth(); ok && eq(u, s.cfg.BasicUser) && eq(p, s.cfg.BasicPassword) {
			return true
		}
		w.Header().Set("WWW-Authenticate", `Basic realm="risewatch", charset="UTF-8"`)
	}
	http.Error(w, "authentication required", http.StatusUnauthorized)
	return false
}

// csrfToken is bound to a per-browser random cookie (double submit, signed).
func (s *Server) csrfToken(w http.ResponseWriter, r *http.Request) string {
	c, err := r.Cookie("rw_csrf")
	id := ""
	if err == nil && len(c.Value) == 32 {
		id = c.Value
	} else {
		b := make([]byte, 16)
		_, _ = rand.Read(b)
		id = hex.EncodeToString(b)
		http.SetCookie(w, &http.Cookie{Name: "rw_csrf", Value: id, Path: "/", HttpOnly: true, SameSite: http.SameSiteStrictMode, Secure: s.cfg.TLSCert != ""})
	}
	return s.sign("csrf:" + id)
}

func (s *Server) checkCSRF(r *http.Request) error {
	c, err := r.Cookie("rw_csrf")
	if err != nil {
		return errors.New("missing CSRF cookie")
	}
	if subtle.ConstantTimeCompare([]byte(r.PostFormValue("csrf")), []byte(s.sign("csrf:"+c.Value))) != 1 {
		return errors.New("bad CSRF token")
	}
	if o := r.Header.Get("Origin"); o != "" && o != "null" {
		u, err := url.Parse(o)
		if err != nil || u.Host != r.Host {
			return fmt.Errorf("cross-origin POST from %q", o)
		}
	}
	return nil
}

// ListenAndServe serves until ctx is cancelled, then shuts down gracefully.
func (s *Server) ListenAndServe(ctx context.Context) error {
	l, err := net.Listen("tcp", s.cfg.Listen)
	if err != nil {
		return fmt.Errorf("web: %w", err)
	}
	return s.Serve(ctx, l)
}

// Serve serves on l until ctx is cancelled.
func (s *Server) Serve(ctx context.Context, l net.Listener) error {
	srv := &http.Server{Handler: s.Handler(), ReadHeaderTimeout: 10 * time.Second, ReadTimeout: 30 * time.Second, WriteTimeout: 60 * time.Second}
	errc := make(chan error, 1)
	go func() {
		if s.cfg.TLSCert != "" {
			errc <- srv.ServeTLS(l, s.cfg.TLSCert, s.cfg.TLSKey)
		} else {
			errc <- srv.Serve(l)
		}
	}()
	select {
	case <-ctx.Done():
		sctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = srv.Shutdown(sctx)
		return nil
	case err := <-errc:
		if errors.Is(err, http.ErrServerClosed) {
			return nil
		}
		return fmt.Errorf("web: %w", err)
	}
}
