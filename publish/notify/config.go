// Package notify sends operator alert e-mails for fault transitions: one
// message when a fault opens (after the rules' persistence) and when it
// clears, grouped so one bad hot-water loop sends one message, re-sent at an
// interval while a fault stays open and unacknowledged, held through quiet
// hours, optionally rolled into a daily digest. Every message is written to a
// durable queue (the store's outbox) with an idempotency key before it is
// sent, so nothing is lost or sent twice across a restart.
package notify

import (
	"errors"
	"fmt"
	"net"
	"os"
	"strings"
	"time"
)

// Config configures alert e-mail. Secrets never come from YAML: the SMTP
// password is read from the environment variable PasswordEnv or the file
// PasswordFile.
type Config struct {
	SMTP     SMTPConfig    `yaml:"smtp"`
	From     string        `yaml:"from"`
	Routes   []Route       `yaml:"routes"`
	Quiet    QuietHours    `yaml:"quiet_hours"`
	Renotify time.Duration `yaml:"renotify"`   // re-send interval for open, unacknowledged faults; 0 = never
	GroupFor time.Duration `yaml:"group_wait"` // how long to gather transitions into one message (default 5m)
	// DigestHour is the local hour (0-23) digest routes are sent at.
	DigestHour int `yaml:"digest_hour"`
	// LinkBase is the dashboard's external URL; ack and snooze links point there.
	LinkBase string `yaml:"link_base"`
	// Location is the site time zone for quiet hours, digests and dates in text.
	Location *time.Location `yaml:"-"`
	// IP selects IP units first in text (SI follows in brackets); false gives SI first.
	IP bool `yaml:"ip_units"`
	// Currency for costs, e.g. "USD".
	Currency string `yaml:"-"`
	// SiteFile is the site file's path as the server knows it, for the
	// "risewatch ack" command printed in each alert (set by the daemon; a
	// placeholder is printed when empty).
	SiteFile string `yaml:"-"`
}

// SMTPConfig says how to reach the mail server.
type SMTPConfig struct {
	Addr         string        `yaml:"addr"`     // host:port
	StartTLS     string        `yaml:"starttls"` // "required" (default), "opportunistic", "off"
	Auth         string        `yaml:"auth"`     // "plain" (default when a username is set), "login", "none"
	Username     string        `yaml:"username"`
	PasswordEnv  string        `yaml:"password_env"`
	PasswordFile string        `yaml:"password_file"`
	Timeout      time.Duration `yaml:"timeout"`
	// ServerName overrides the TLS server name (defaults to the host of Addr).
	ServerName string `yaml:"server_name"`
}

// Route sends some faults to some people. A transition matches a route when
// every non-empty selector matches.
type Route struct {
	Name        string   `yaml:"name"`
	To          []string `yaml:"to"`
	Sites       []string `yaml:"sites"`
	AHUs        []string `yaml:"ahus"`
	Loops       []string `yaml:"loops"`
	Kinds       []string `yaml:"kinds"`
	MaxSeverity int      `yaml:"max_severity"` // 1 = most urgent; 0 = any severity
	Digest      bool     `yaml:"digest"`       // daily digest instead of immediate messages
	// IgnoreQuiet sends during quiet hours (for an on-call address).
	IgnoreQuiet bool `yaml:"ignore_quiet_hours"`
}

// QuietHours holds messages between Start and End (local clock, "HH:MM");
// messages falling in that span are sent at End. Equal values mean none.
type QuietHours struct {
	Start string `yaml:"start"`
	End   string `yaml:"end"`
}

// Validate checks the configuration and fills defaults.
func (c *Config) Validate() error {
	var errs []error
	if c.SMTP.Addr == "" {
		errs = append(errs, errors.New("smtp.addr: required (host:port)"))
	} else if _, _, err := net.SplitHostPort(c.SMTP.Addr); err != nil {
		errs = append(errs, fmt.Errorf("smtp.addr %q: want host:port: %w", c.SMTP.Addr, err))
	}
	switch c.SMTP.StartTLS {
	case "":
		c.SMTP.StartTLS = "required"
	case "required", "opportunistic", "off":
	default:
		errs = append(errs, fmt.Errorf("smtp.starttls %q: want required, opportunistic or off", c.SMTP.StartTLS))
	}
	switch c.SMTP.Auth {
	case "":
		c.SMTP.Auth = "none"
		if c.SMTP.Username != "" {
			c.SMTP.Auth = "plain"
		}
	case "plain", "login", "none":
	default:
		errs = append(errs, fmt.Errorf("smtp.auth %q: want plain, login or none", c.SMTP.Auth))
	}
	if c.SMTP.Auth != "none" && c.SMTP.Username == "" {
		errs = append(errs, fmt.Errorf("smtp.auth %s needs smtp.username", c.SMTP.Auth))
	}
	if c.SMTP.Auth != "none" && c.SMTP.PasswordEnv == "" && c.SMTP.PasswordFile == "" {
		errs = append(errs, errors.New("smtp: a password source is required (password_env or password_file; never the password itself)"))
	}
	if c.SMTP.Timeout == 0 {
		c.SMTP.Timeout = 30 * time.Second
	}
	if !strings.Contains(c.From, "@") {
		errs = append(errs, fmt.Errorf("from %q: want an e-mail address", c.From))
	}
	if len(c.Routes) == 0 {
		errs = append(errs, errors.New("routes: at least one route is required"))
	}
	for i, r := range c.Routes {
		if r.Name == "" {
			errs = append(errs, fmt.Errorf("routes[%d]: name required", i))
		}
		if len(r.To) == 0 {
			errs = append(errs, fmt.Errorf("routes[%d] %s: to: at least one recipient", i, r.Name))
		}
		for _, a := range r.To {
			if !strings.Contains(a, "@") || strings.ContainsAny(a, "\r\n<>") {
				errs = append(errs, fmt.Errorf("routes[%d] %s: recipient %q is not an address", i, r.Name, a))
			}
		}
	}
	if _, _, err := c.Quiet.parse(); err != nil {
		errs = append(errs, err)
	}
	if c.GroupFor == 0 {
		c.GroupFor = 5 * time.Minute
	}
	if c.DigestHour < 0 || c.DigestHour > 23 {
		errs = append(errs, fmt.Errorf("digest_hour %d: want 0-23", c.DigestHour))
	}
	if c.Location == nil {
		c.Location = time.UTC
	}
	return errors.Join(errs...)
}

// Password reads the SMTP password from its configured source.
func (s SMTPConfig) Password() (string, error) {
	if s.PasswordEnv != "" {
		if v, ok := os.LookupEnv(s.PasswordEnv); ok {
			return v, nil
		}
		if s.PasswordFile == "" {
			return "", fmt.Errorf("smtp password: environment variable %s is not set", s.PasswordEnv)
		}
	}
	if s.PasswordFile != "" {
		b, err := os.ReadFile(s.PasswordFile)
		if err != nil {
			return "", fmt.Errorf("smtp password file: %w", err)
		}
		return strings.TrimRight(string(b), "\r\n"), nil
	}
	return "", nil
}

func parseClock(s string) (int, error) {
	t, err := time.Parse("15:04", s)
	if err != nil {
		return 0, fmt.Errorf("quiet_hours: %q: want HH:MM", s)
	}
	return t.Hour()*60 + t.Minute(), nil
}

func (q QuietHours) parse() (start, end int, err error) {
	if q.Start == "" && q.End == "" {
		return 0, 0, nil
	}
	if start, err = parseClock(q.Start); err != nil {
		return
	}
	end, err = parseClock(q.End)
	return
}

// Release returns the earliest time at or after t that is outside quiet
// hours (t itself when t is not quiet).
func (q QuietHours) Release(t time.Time, loc *time.Location) time.Time {
	start, end, err := q.parse()
	if err != nil || start == end {
		return t
	}
	lt := t.In(loc)
	m := lt.Hour()*60 + lt.Minute()
	quiet := false
	if start < end {
		quiet = m >= start && m < end
	} else { // spans midnight
		quiet = m >= start || m < end
	}
	if !quiet {
		return t
	}
	day := time.Date(lt.Year(), lt.Month(), lt.Day(), 0, 0, 0, 0, loc)
	rel := time.Date(day.Year(), day.Month(), day.Day(), end/60, end%60, 0, 0, loc)
	if !rel.After(lt) {
		rel = rel.AddDate(0, 0, 1)
	}
	return rel
}
