package daemon

import (
	"fmt"
	"net"
	"net/url"
	"os"
	"regexp"
	"strings"
	"time"

	"gopkg.in/yaml.v3"

	"risewatch/publish/notify"
	"risewatch/publish/report"
	"risewatch/site"
)

// Defaults of the daemon section (common practice for a minute-grid daemon).
const (
	DefaultDataDir      = "/var/lib/risewatch"
	DefaultPersistEvery = 10 * time.Minute // baselines and plot series to the store
	DefaultSnapshot     = 30 * time.Second // lifecycle state when no fault changed
	DefaultAckPoll      = 5 * time.Second  // acknowledgements made by `risewatch ack`
	DefaultNotifyEvery  = 15 * time.Second // group, remind and deliver e-mail
	// DefaultOutboxKeep is how long sent outbox rows (e-mail, InfluxDB
	// batches) are kept for de-duplication before they are purged.
	DefaultOutboxKeep = 30 * 24 * time.Hour
	// DefaultPurgeEvery is how often sent outbox rows older than
	// outbox_keep are deleted.
	DefaultPurgeEvery = time.Hour
	// DefaultLatenessSteps caps the default lateness in steps (see
	// Config.Lateness): 60 steps is the 1 h default at the 1 min step.
	DefaultLatenessSteps = 60
)

// Config is the daemon: section of a site file. Secrets are never held
// here: only the names of the environment variables (or files) that hold
// them.
type Config struct {
	DataDir string        `yaml:"data_dir"`
	Listen  string        `yaml:"listen"`
	Step    time.Duration `yaml:"step"` // analysis grid; default 1 min
	// Lateness bounds how long a step waits for a lagging source. Default
	// collector.DefaultLateness (1 h), or DefaultLatenessSteps steps when
	// that is shorter: the assembler holds every point's values for
	// lateness/step steps, so a 10 s step with a 1 h lateness would hold
	// six times what the default 1 min step does.
	Lateness time.Duration `yaml:"lateness"`
	Rules    string        `yaml:"rules"` // site rules file (overrides and additions)
	// PersistEvery is how often baselines and plot series go to the store
	// (and always at shutdown).
	PersistEvery time.Duration `yaml:"persist_every"`
	// OutboxKeep is how long a sent e-mail or InfluxDB batch stays in the
	// outbox (its key de-duplicates a replay) before it is purged.
	OutboxKeep time.Duration  `yaml:"outbox_keep"`
	Web        WebConfig      `yaml:"web"`
	Notify     *notify.Config `yaml:"notify"`
	// MailSpool, when set, writes each message as an .eml file into this
	// directory instead of sending it by SMTP (tests, demos, air-gapped sites).
	MailSpool string       `yaml:"mail_spool"`
	Influx    InfluxConfig `yaml:"influx"`
	Report    ReportConfig `yaml:"report"`
	Shards    []Shard      `yaml:"shards"`
	// MemoryLimit is the Go runtime's soft memory limit: "auto" (default,
	// from the shard's terminal count), "off" or a size such as "160MiB"
	// (see MemLimitBase). A GOMEMLIMIT environment variable wins.
	MemoryLimit string `yaml:"memory_limit"`

	// Set by the decoder, not from YAML.
	File     string     `yaml:"-"`
	Line     int        `yaml:"-"`
	node     *yaml.Node `yaml:"-"`
	loc      *time.Location
	memLimit memLimit
}

// WebConfig configures the dashboard listener.
type WebConfig struct {
	// TokenEnv names the environment variable holding the bearer token
	// required when the dashboard listens off loopback.
	TokenEnv  string `yaml:"token_env"`
	BasicUser string `yaml:"basic_user"`
	// BasicPasswordEnv names the variable holding the basic-auth password.
	BasicPasswordEnv string `yaml:"basic_password_env"`
	TLSCert          string `yaml:"tls_cert"`
	TLSKey           string `yaml:"tls_key"`
	IP               bool   `yaml:"ip_units"` // IP units first on the pages
}

// InfluxConfig configures the InfluxDB sink (empty URL: no sink).
type InfluxConfig struct {
	URL      string `yaml:"url"`
	Org      string `yaml:"org"`
	Bucket   string `yaml:"bucket"`
	TokenEnv string `yaml:"token_env"`
}

// ReportConfig configures the weekly contractor report.
type ReportConfig struct {
	Schedule string   `yaml:"schedule"` // five-field cron spec in site time; default Monday 06:00
	To       []string `yaml:"to"`       // contractor recipients (needs notify for the mail server)
	IP       bool     `yaml:"ip_units"`
	// Paper is the PDF's page size, letter or a4; empty: letter with IP
	// units, a4 with SI (a Canadian site in SI printing on Letter sets it).
	Paper    string `yaml:"paper"`
	Disabled bool   `yaml:"disabled"`
	// Readiness, when set, adds the low-temperature readiness section.
	Readiness *ReadinessConfig `yaml:"readiness"`
}

// Shard selects part of the site for one daemon process. A terminal
// belongs to the first shard (in file order) with a matching selector.
type Shard struct {
	Name      string   `yaml:"name"`
	Buildings []string `yaml:"buildings"`
	AHUs      []string `yaml:"ahus"`
	Loops     []string `yaml:"loops"`
	// Sources: terminals whose points come from these sources, e.g. one
	// BACnet source per network or BBMD.
	Sources []string `yaml:"sources"`
}

// Location is the site time zone the config was decoded for.
func (c *Config) Location() *time.Location {
	if c.loc == nil {
		return time.UTC
	}
	return c.loc
}

var envNameRE = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

// DecodeConfig decodes and checks s.Daemon. A site without a daemon:
// section gets the defaults. Errors are a site.ErrorList with positions in
// s.File.
func DecodeConfig(s *site.Site) (*Config, error) {
	c := &Config{File: s.File, loc: s.Location}
	el := &errList{file: s.File}
	if n := s.Daemon; n != nil {
		c.node = n
		c.Line = n.Line
		checkKeys(el, n, typeOfConfig, "daemon")
		if len(el.list) == 0 {
			if err := n.Decode(c); err != nil {
				el.yamlErr(n, err)
			}
		}
	}
	if len(el.list) > 0 {
		return nil, el.err()
	}
	c.defaults()
	c.validate(el)
	return c, el.err()
}

func (c *Config) defaults() {
	if c.DataDir == "" {
		c.DataDir = DefaultDataDir
	}
	if c.Listen == "" {
		c.Listen = "127.0.0.1:9470"
	}
	if c.Step == 0 {
		c.Step = time.Minute
	}
	if c.PersistEvery == 0 {
		c.PersistEvery = DefaultPersistEvery
	}
	if c.OutboxKeep == 0 {
		c.OutboxKeep = DefaultOutboxKeep
	}
	if c.Report.Schedule == "" {
		c.Report.Schedule = report.DefaultSpec
	}
}

func (c *Config) validate(el *errList) {
	at := func(path string) *yaml.Node { return nodeAt(c.node, path) }
	if _, _, err := net.SplitHostPort(c.Listen); err != nil {
		el.at(at("listen"), "daemon: listen %q: expected host:port such as 127.0.0.1:9470", c.Listen)
	}
	if c.Step < 10*time.Second || c.Step > time.Hour {
		el.at(at("step"), "daemon: step %s: expected 10s to 1h (the analysis grid, usually 1m)", c.Step)
	}
	if c.Lateness < 0 || c.Lateness > 48*time.Hour {
		el.at(at("lateness"), "daemon: lateness %s: expected 0 to 48h", c.Lateness)
	}
	if ml, err := parseMemLimit(c.MemoryLimit); err != nil {
		el.at(at("memory_limit"), "daemon: memory_limit %v", err)
	} else {
		c.memLimit = ml
	}
	if c.OutboxKeep < time.Hour {
		el.at(at("outbox_keep"), "daemon: outbox_keep %s: expected at least 1h (sent rows are kept to de-duplicate replays)", c.OutboxKeep)
	}
	if c.PersistEvery < time.Second {
		el.at(at("persist_every"), "daemon: persist_every %s: expected at least 1s", c.PersistEvery)
	}
	for _, k := range []struct{ path, v string }{{"web.token_env", c.Web.TokenEnv}, {"web.basic_password_env", c.Web.BasicPasswordEnv}, {"influx.token_env", c.Influx.TokenEnv}} {
		if k.v != "" && !envNameRE.MatchString(k.v) {
			el.at(at(k.path), "daemon: %s %q is not an environment variable name; the secret itself never goes in this file", k.path, k.v)
		}
	}
	if (c.Web.TLSCert == "") != (c.Web.TLSKey == "") {
		el.at(at("web"), "daemon: web: tls_cert and tls_key go together")
	}
	if c.Web.BasicUser != "" && c.Web.BasicPasswordEnv == "" {
		el.at(at("web.basic_user"), "daemon: web: basic_user needs basic_password_env (the password never goes in this file)")
	}
	if c.Influx.URL != "" {
		u, err := url.Parse(c.Influx.URL)
		if err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			el.at(at("influx.url"), "daemon: influx: url %q: expected http:// or https:// and a host", c.Influx.URL)
		} else if u.User != nil {
			el.at(at("influx.url"), "daemon: influx: url must not carry credentials; name an environment variable in token_env")
		}
		if c.Influx.Bucket == "" {
			el.at(at("influx"), "daemon: influx: bucket is required with url")
		}
	} else if c.Influx.Bucket != "" || c.Influx.TokenEnv != "" {
		el.at(at("influx"), "daemon: influx: url is required (without it there is no InfluxDB sink)")
	}
	if c.Notify != nil {
		if c.MailSpool != "" && c.Notify.SMTP.Addr == "" {
			// The spool replaces the server; Validate still wants an address.
			c.Notify.SMTP.Addr, c.Notify.SMTP.StartTLS = "localhost:25", "off"
		}
		c.Notify.Location = c.Location()
		if err := c.Notify.Validate(); err != nil {
			for _, line := range strings.Split(err.Error(), "\n") {
				el.at(at("notify"), "daemon: notify: %s", line)
			}
		}
	} else if c.MailSpool != "" {
		el.at(at("mail_spool"), "daemon: mail_spool needs a notify: section (sender and routes)")
	}
	if !c.Report.Disabled {
		if _, err := report.ParseSchedule(c.Report.Schedule, c.Location()); err != nil {
			el.at(at("report.schedule"), "daemon: report: schedule %q: %v (five cron fields in site time, e.g. \"0 6 * * MON\")", c.Report.Schedule, err)
		}
	}
	switch c.Report.Paper {
	case "", report.PaperLetter, report.PaperA4:
	default:
		el.at(at("report.paper"), "daemon: report: paper %q: want %s or %s", c.Report.Paper, report.PaperLetter, report.PaperA4)
	}
	for i, a := range c.Report.To {
		if !strings.Contains(a, "@") || strings.ContainsAny(a, "\r\n<>") {
			el.at(nodeAt(c.node, fmt.Sprintf("report.to.%d", i)), "daemon: report: to: %q is not an e-mail address", a)
		}
	}
	if r := c.Report.Readiness; r != nil {
		for _, e := range r.parse() {
			n := at("report.readiness." + e.key)
			if e.key == "" || n == nil {
				n = at("report.readiness")
			}
			el.at(n, "daemon: report: readiness: %s", e.msg)
		}
	}
	if len(c.Report.To) > 0 && c.Notify == nil {
		el.at(at("report.to"), "daemon: report: to needs a notify: section (the mail server and sender)")
	}
	seen := map[string]bool{}
	for i, sh := range c.Shards {
		n := nodeAt(c.node, fmt.Sprintf("shards.%d", i))
		if sh.Name == "" {
			el.at(n, "daemon: shards[%d]: name is required", i)
		} else if seen[sh.Name] {
			el.at(n, "daemon: shards: duplicate shard %q", sh.Name)
		}
		seen[sh.Name] = true
		if len(sh.Buildings)+len(sh.AHUs)+len(sh.Loops)+len(sh.Sources) == 0 {
			el.at(n, "daemon: shard %q selects nothing: give buildings, ahus, loops or sources", sh.Name)
		}
	}
}

// WebToken reads the dashboard token from its environment variable.
func (c *Config) WebToken() (string, error) {
	if c.Web.TokenEnv == "" {
		return "", nil
	}
	v, ok := os.LookupEnv(c.Web.TokenEnv)
	if !ok || v == "" {
		return "", fmt.Errorf("web: environment variable %s (token_env) is not set", c.Web.TokenEnv)
	}
	return v, nil
}

// BasicPassword reads the basic-auth password from its environment variable.
func (c *Config) BasicPassword() (string, error) {
	if c.Web.BasicUser == "" {
		return "", nil
	}
	v, ok := os.LookupEnv(c.Web.BasicPasswordEnv)
	if !ok || v == "" {
		return "", fmt.Errorf("web: environment variable %s (basic_password_env) is not set", c.Web.BasicPasswordEnv)
	}
	return v, nil
}

// InfluxToken reads the sink's token from its environment variable.
func (c *Config) InfluxToken() string {
	if c.Influx.TokenEnv == "" {
		return ""
	}
	return os.Getenv(c.Influx.TokenEnv)
}

// Load reads a site file and decodes its daemon: section.
func Load(path string) (*site.Site, *Config, error) {
	s, err := site.Load(path)
	if err != nil {
		return nil, nil, err
	}
	c, err := DecodeConfig(s)
	if err != nil {
		return nil, nil, err
	}
	return s, c, nil
}
