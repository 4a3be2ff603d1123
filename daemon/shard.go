package daemon

import (
	"fmt"
	"os"
	"regexp"
	"strconv"
	"strings"

	"risewatch/site"
)

// ordinalRE matches a StatefulSet pod name such as "risewatch-2".
var ordinalRE = regexp.MustCompile(`-(\d+)$`)

// ShardFromHostname picks the shard for a StatefulSet pod: ordinal N of
// POD_NAME (or the hostname) "risewatch-N" selects the Nth shard (from 0).
func ShardFromHostname(c *Config) (string, error) {
	name := os.Getenv("POD_NAME")
	if name == "" {
		h, err := os.Hostname()
		if err != nil {
			return "", fmt.Errorf("shard from hostname: %w", err)
		}
		name = h
	}
	m := ordinalRE.FindStringSubmatch(name)
	if m == nil {
		return "", fmt.Errorf("shard from hostname: %q does not end in -N (a StatefulSet ordinal)", name)
	}
	n, _ := strconv.Atoi(m[1])
	if len(c.Shards) == 0 {
		if n == 0 {
			return "", nil // one replica without shards serves the whole site
		}
		return "", fmt.Errorf("shard from hostname: %s is replica %d but the daemon section defines no shards", name, n)
	}
	if n >= len(c.Shards) {
		return "", fmt.Errorf("shard from hostname: %s is replica %d but only %d shard(s) are defined", name, n, len(c.Shards))
	}
	return c.Shards[n].Name, nil
}

// SelectShard returns the part of s that shard name covers: its terminals
// and the loops and AHUs they use, with fresh indexes. An empty name returns
// s itself.
func SelectShard(s *site.Site, c *Config, name string) (*site.Site, error) {
	if name == "" {
		return s, nil
	}
	var sh *Shard
	var names []string
	for i := range c.Shards {
		names = append(names, c.Shards[i].Name)
		if c.Shards[i].Name == name {
			sh = &c.Shards[i]
		}
	}
	if sh == nil {
		return nil, fmt.Errorf("shard %q is not defined (have: %s)", name, strings.Join(names, ", "))
	}
	in := func(list []string, v string) bool {
		for _, x := range list {
			if x == v {
				return true
			}
		}
		return false
	}
	matches := func(sh *Shard, t *site.Terminal) bool {
		if in(sh.Buildings, t.Building) || in(sh.AHUs, t.AHU) || in(sh.Loops, t.Loop) {
			return true
		}
		p := t.Points
		for _, r := range []site.PointRef{p.Airflow, p.AirflowSetpoint, p.Discharge, p.Valve, p.ZoneTemp, p.ZoneSetpoint} {
			if r.Source != "" && in(sh.Sources, r.Source) {
				return true
			}
		}
		return false
	}
	// A terminal belongs to the first shard that selects it, so the shards
	// partition the site even when selectors overlap.
	owner := func(t *site.Terminal) *Shard {
		for i := range c.Shards {
			if matches(&c.Shards[i], t) {
				return &c.Shards[i]
			}
		}
		return nil
	}
	out := *s
	out.Terminals = nil
	loops, ahus := map[string]bool{}, map[string]bool{}
	for i := range s.Terminals {
		t := &s.Terminals[i]
		if owner(t) == sh {
			out.Terminals = append(out.Terminals, *t)
			loops[t.Loop], ahus[t.AHU] = true, true
		}
	}
	if len(out.Terminals) == 0 {
		return nil, fmt.Errorf("shard %q selects no terminal of site %s", name, s.Name)
	}
	out.Loops, out.AHUs = nil, nil
	for _, l := range s.Loops {
		if loops[l.ID] {
			out.Loops = append(out.Loops, l)
		}
	}
	for _, a := range s.AHUs {
		if ahus[a.ID] {
			out.AHUs = append(out.AHUs, a)
		}
	}
	out.Index()
	return &out, nil
}
