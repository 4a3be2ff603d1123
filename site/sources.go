package site

import (
	"net"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"gopkg.in/yaml.v3"
)

// Source defaults (common practice for BAS polling; ASHRAE 135 leaves them
// to the installation).
const (
	defaultBACnetBind = "0.0.0.0:47808" // 0xBAC0, the BACnet/IP UDP port (ASHRAE 135 Annex J)
	defaultPoll       = time.Minute
	defaultSweep      = 15 * time.Minute
	defaultTimeout    = 3 * time.Second
	defaultRetries    = 3
	defaultTTL        = 5 * time.Minute
	defaultInfluxPage = 24 * time.Hour
)

var sourceKeys = map[string][]string{
	"trendfile": {"name", "kind", "points", "path", "layout", "delimiter", "decimal_comma", "skip_rows", "time_column", "time_format", "time_zone", "point_column", "value_column", "watch", "glob", "processed_dir"},
	"bacnet":    {"name", "kind", "points", "bind", "bbmd", "ttl", "poll_interval", "trend_sweep", "timeout", "retries", "devices"},
	"influx":    {"name", "kind", "points", "url", "org", "bucket", "token_env", "page", "token"},
}

// decodeSources reads the sources list. It runs before loops, AHUs and
// terminals so points can refer to sources.
func (d *decoder) decodeSources(n *yaml.Node, siteZone *time.Location) {
	seen := map[string]int{}
	for _, item := range seqItems(d.e, n, "sources") {
		pre := mapping(&errs{seen: map[Error]bool{}}, item, "source", "name", "kind") // peek without reporting
		kind := strings.ToLower(pre.str("kind", false, ""))
		name := pre.str("name", false, "")
		what := "source"
		if name != "" {
			what = "source " + name
		}
		keys, ok := sourceKeys[kind]
		if !ok {
			if kv := pre.scalar("kind"); kv != nil {
				d.e.at(kv, "%s: kind %q is not one of: trendfile, bacnet, influx", what, kind)
			} else {
				d.e.at(item, "%s: kind is required: trendfile, bacnet or influx", what)
			}
			d.broken[name] = true // references to it are not errors of their own
			continue
		}
		m := mapping(d.e, item, what, keys...)
		if m.has("name") && !validID(name) {
			d.e.at(m.at("name"), "%s: name must be %s", what, idRule)
		} else if name == "" {
			m.missing("name", "a short name points refer to, e.g. bas or export")
		}
		if line, dup := seen[name]; dup && name != "" {
			d.e.at(m.at("name"), "%s: duplicate source name (first at line %d)", what, line)
			continue
		}
		rv := resolve(item)
		seen[name] = rv.Line
		sc := SourceConfig{Name: name, Kind: kind, Line: rv.Line}
		switch kind {
		case "trendfile":
			sc.Trendfile = d.trendfile(m, what, siteZone)
		case "bacnet":
			sc.BACnet = d.bacnetSource(m, what)
		case "influx":
			sc.Influx = d.influxSource(m, what)
		}
		d.sources = append(d.sources, sc)
		last := &d.sources[len(d.sources)-1]
		last.Points = d.decodePatterns(last, m.val("points"))
	}
}

func (d *decoder) trendfile(m *mapReader, what string, zone *time.Location) *TrendfileConfig {
	c := &TrendfileConfig{
		Path:         m.str("path", true, "a CSV file, or a directory with watch: true"),
		Layout:       m.oneOf("layout", "wide", "wide", "long"),
		Delimiter:    ',',
		TimeColumn:   m.str("time_column", false, ""),
		TimeFormat:   "rfc3339",
		TimeZone:     zone,
		ProcessedDir: m.str("processed_dir", false, ""),
		Glob:         "*.csv",
	}
	if s := m.str("delimiter", false, ""); s != "" || m.has("delimiter") {
		switch strings.ToLower(s) {
		case "tab", `\t`:
			c.Delimiter = '\t'
		default:
			r, size := utf8.DecodeRuneInString(s)
			if size == 0 || size != len(s) || r == '"' || r == '\r' || r == '\n' || r == utf8.RuneError {
				d.e.at(m.at("delimiter"), "%s: delimiter: expected one character such as \",\" or \";\" (or tab), found %q", what, s)
			} else {
				c.Delimiter = r
			}
		}
	}
	if b, ok := m.boolean("decimal_comma"); ok {
		c.DecimalComma = b
		if b && c.Delimiter == ',' {
			d.e.at(m.at("decimal_comma"), "%s: decimal_comma needs a delimiter other than \",\" (usually \";\")", what)
		}
	}
	if x, ok := m.integer("skip_rows", false, 0, 1000); ok {
		c.SkipRows = int(x)
	}
	if s := m.str("time_format", false, ""); s != "" {
		switch strings.ToLower(s) {
		case "rfc3339", "unix", "unix_ms":
			c.TimeFormat = strings.ToLower(s)
		default:
			if !strings.Contains(s, "06") || !strings.Contains(s, "01") && !strings.Contains(s, "Jan") && !strings.Contains(s, "1/") {
				d.e.at(m.at("time_format"), "%s: time_format %q: expected rfc3339, unix, unix_ms or a Go reference layout such as \"2006-01-02 15:04:05\" or \"01/02/2006 3:04:05 PM\"", what, s)
			} else {
				c.TimeFormat = s
			}
		}
	}
	if s := m.str("time_zone", false, ""); s != "" {
		if loc, err := time.LoadLocation(s); err != nil || s == "Local" {
			d.e.at(m.at("time_zone"), "%s: time_zone %q: expected an IANA zone name such as America/Chicago or Europe/Berlin", what, s)
		} else {
			c.TimeZone = loc
		}
	}
	if c.Layout == "long" {
		c.PointColumn = m.str("point_column", true, "the column holding point names in the long layout")
		c.ValueColumn = m.str("value_column", true, "the column holding values in the long layout")
	} else {
		for _, k := range []string{"point_column", "value_column"} {
			if m.has(k) {
				d.e.at(m.at(k), "%s: %s applies to layout: long only", what, k)
			}
		}
	}
	if b, ok := m.boolean("watch"); ok {
		c.Watch = b
	}
	if s := m.str("glob", false, ""); s != "" {
		c.Glob = s
	}
	if !c.Watch {
		for _, k := range []string{"processed_dir", "glob"} {
			if m.has(k) {
				d.e.at(m.at(k), "%s: %s applies to a drop folder (watch: true) only", what, k)
			}
		}
	}
	return c
}

func (d *decoder) bacnetSource(m *mapReader, what string) *BACnetConfig {
	c := &BACnetConfig{
		Bind:         defaultBACnetBind,
		PollInterval: m.duration("poll_interval", defaultPoll, 24*time.Hour),
		TrendSweep:   m.duration("trend_sweep", defaultSweep, 7*24*time.Hour),
		Timeout:      m.duration("timeout", defaultTimeout, time.Minute),
		Retries:      defaultRetries,
	}
	if s := m.str("bind", false, ""); s != "" {
		c.Bind = d.hostPort(m.at("bind"), what+": bind", s, false)
	}
	if s := m.str("bbmd", false, ""); s != "" {
		c.BBMD = d.hostPort(m.at("bbmd"), what+": bbmd", s, true)
		c.TTL = m.duration("ttl", defaultTTL, 18*time.Hour)
	} else if m.has("ttl") {
		d.e.at(m.at("ttl"), "%s: ttl applies to foreign-device registration with a bbmd only", what)
	}
	if x, ok := m.integer("retries", false, 0, 10); ok {
		c.Retries = int(x)
	}
	dv := resolve(m.val("devices"))
	if dv != nil && !isNull(dv) {
		if dv.Kind != yaml.MappingNode {
			d.e.at(m.at("devices"), "%s: devices: expected a mapping of device instance: address", what)
			return c
		}
		c.Devices = map[uint32]string{}
		for i := 0; i+1 < len(dv.Content); i += 2 {
			k, v := resolve(dv.Content[i]), resolve(dv.Content[i+1])
			inst, err := strconv.ParseUint(k.Value, 10, 32)
			if k.Kind != yaml.ScalarNode || err != nil || inst > maxInstance {
				d.e.at(dv.Content[i], "%s: devices: key %q: expected a device instance 0 to %d", what, k.Value, maxInstance)
				continue
			}
			if _, dup := c.Devices[uint32(inst)]; dup {
				d.e.at(dv.Content[i], "%s: devices: duplicate device %d", what, inst)
				continue
			}
			if v == nil || v.Kind != yaml.ScalarNode {
				d.e.at(dv.Content[i+1], "%s: devices: %d: expected an address such as 10.1.2.31:47808", what, inst)
				continue
			}
			// A device behind a BACnet router: "ip[:port]/NET:MAC" (MAC in hex),
			// the form collector/bacnet.ParseAddress reads.
			host, route, routed := strings.Cut(v.Value, "/")
			addr := d.hostPort(v, what+": devices: "+k.Value, host, true)
			if routed {
				if !validRoute(route) {
					d.e.at(v, "%s: devices: %s: route %q: expected /NET:MAC with NET 1 to 65534 and a MAC of 1 to 7 octets in hex, e.g. 10.1.2.31:47808/2001:0a", what, k.Value, route)
				}
				addr += "/" + route
			}
			c.Devices[uint32(inst)] = addr
		}
	}
	return c
}

// hostPort checks "host:port" (port 47808 added when missing and addPort).
func (d *decoder) hostPort(n *yaml.Node, what, s string, addPort bool) string {
	if addPort && !strings.Contains(s, ":") {
		s += ":47808"
	}
	host, port, err := net.SplitHostPort(s)
	p, perr := strconv.Atoi(port)
	if err != nil || perr != nil || p < 0 || p > 65535 || (host != "" && net.ParseIP(host) == nil && !validHost(host)) {
		d.e.at(n, "%s: %q: expected address:port such as 10.1.2.31:47808", what, s)
	}
	return s
}

var routeRE = regexp.MustCompile(`^([0-9]{1,5}):((?:[0-9A-Fa-f]{2}){1,7})$`)

// validRoute checks the NET:MAC part of a routed device address.
func validRoute(r string) bool {
	m := routeRE.FindStringSubmatch(r)
	if m == nil {
		return false
	}
	n, err := strconv.Atoi(m[1])
	return err == nil && n >= 1 && n <= 65534
}

var hostRE = regexp.MustCompile(`^[A-Za-z0-9]([A-Za-z0-9.-]{0,252})$`)

func validHost(h string) bool { return hostRE.MatchString(h) }

var envName = regexp.MustCompile(`^[A-Za-z_][A-Za-z0-9_]*$`)

func (d *decoder) influxSource(m *mapReader, what string) *InfluxConfig {
	c := &InfluxConfig{
		URL:      m.str("url", true, "the InfluxDB URL, e.g. http://127.0.0.1:8086"),
		Org:      m.str("org", true, "the InfluxDB organisation"),
		Bucket:   m.str("bucket", true, "the bucket holding the BAS series"),
		TokenEnv: m.str("token_env", true, "the name of the environment variable holding the API token"),
		Page:     m.duration("page", defaultInfluxPage, 31*24*time.Hour),
	}
	if c.URL != "" {
		u, err := url.Parse(c.URL)
		if err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			d.e.at(m.at("url"), "%s: url %q: expected http:// or https:// and a host", what, c.URL)
		} else if u.User != nil {
			d.e.at(m.at("url"), "%s: url must not carry credentials; name an environment variable in token_env", what)
		}
	}
	if m.has("token") {
		d.e.at(m.at("token"), "%s: an API token never goes in this file; set token_env: NAME and export NAME in the daemon's environment", what)
	}
	if c.TokenEnv != "" && !envName.MatchString(c.TokenEnv) {
		d.e.at(m.at("token_env"), "%s: token_env %q is not an environment variable name; the token itself never goes in this file", what, c.TokenEnv)
	}
	return c
}

func (d *decoder) source(name string) *SourceConfig {
	for i := range d.sources {
		if d.sources[i].Name == name {
			return &d.sources[i]
		}
	}
	return nil
}

func (d *decoder) sourceNames() string {
	if len(d.sources) == 0 {
		return "(none)"
	}
	names := make([]string, len(d.sources))
	for i, s := range d.sources {
		names[i] = s.Name
	}
	return strings.Join(names, ", ")
}
