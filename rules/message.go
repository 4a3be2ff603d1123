package rules

import (
	"fmt"
	"math"
	"strings"
	"text/template"

	"risewatch/units"
)

// Message templates are Go text/template text with the data below. Numbers
// are SI; the formatting functions print SI first and IP in brackets (and
// the other way round in the IP-first rendering, Transition.MessageIP):
//
//	{{dtemp .E.leak_rise_k}}  → "3.4 K (6.1 °F)"
//	{{temp .E.hw_c}}          → "60.0 °C (140.0 °F)"
//	{{flow .E.airflow_m3s}}   → "141.6 L/s (300 cfm)"
//	{{power .Impact.WastedHeatW}} → "0.47 kW (1.6 MBH)"
//	{{energy .Impact.WeeklyHeatKWh}} → "79 kWh (2.7 therm)"
//	{{coolenergy .Impact.WeeklyCoolKWh}} → "79 kWh (22.5 ton-h)"
//	{{pct .E.valve}}          → "0 %"
//	{{mins .E.closed_min}}    → "45 min" / "3.5 h"
//	{{money .Impact.WeeklyCost}} → "USD 12.40"
//	{{num .E.rise_valve_corr 2}}, {{sub a b}}, {{add a b}}, {{mul a b}}, {{abs a}}
//	{{pair "3 K" "5 °F"}}     → "3 K (5 °F)", a figure written out both ways
//	{{if known .E.closed_offset_k}}…{{end}} → only when the value is available
//
// A missing field reads as NaN and prints as "n/a".
type msgData struct {
	Entity   string
	Kind     string
	Rule     string
	Title    string
	Source   string
	E        map[string]float64
	Impact   Impact
	Currency string
	Loop     string
	AHU      string
}

func na(v float64) bool { return math.IsNaN(v) || math.IsInf(v, 0) }

// unitPair formats v both ways, SI first and IP in brackets or, with
// ipFirst, the other way round; a missing value prints as "n/a". Message
// templates and Transition.Summary share it, through unitFmt.
func unitPair(f func(v float64, ip bool) string, v float64, ipFirst bool) string {
	return units.FormatPair(f, v, ipFirst, "n/a")
}

// unitFmt formats values with both units, IP first when ip is set.
type unitFmt struct{ ip bool }

func (u unitFmt) temp(c float64) string        { return unitPair(units.FormatTemp, c, u.ip) }
func (u unitFmt) dtemp(k float64) string       { return unitPair(units.FormatTempDiff, k, u.ip) }
func (u unitFmt) airflow(m3s float64) string   { return unitPair(units.FormatAirflow, m3s, u.ip) }
func (u unitFmt) waterFlow(m3s float64) string { return unitPair(units.FormatWaterFlow, m3s, u.ip) }
func (u unitFmt) power(w float64) string       { return unitPair(units.FormatPower, w, u.ip) }
func (u unitFmt) energy(kwh float64) string    { return unitPair(units.FormatHeatEnergy, kwh, u.ip) }
func (u unitFmt) coolEnergy(kwh float64) string {
	return unitPair(units.FormatCoolingEnergy, kwh, u.ip)
}

// pair gives a figure written out in both units, such as a published
// limit whose IP and SI values are each rounded ("3 K", "5 °F"), in u's
// order.
func (u unitFmt) pair(si, ip string) string {
	if u.ip {
		si, ip = ip, si
	}
	return si + " (" + ip + ")"
}

func fmtPct(f float64) string {
	if na(f) {
		return "n/a"
	}
	return units.FormatPercent(f)
}

func fmtMins(m float64) string {
	if na(m) {
		return "n/a"
	}
	return minutes(m)
}

// messageFuncs are the template functions, with both units in the order u
// gives.
func messageFuncs(u unitFmt) template.FuncMap {
	return template.FuncMap{
		"temp":       u.temp,
		"dtemp":      u.dtemp,
		"flow":       u.airflow,
		"power":      u.power,
		"energy":     u.energy,
		"coolenergy": u.coolEnergy,
		"pct":        fmtPct,
		"mins":       fmtMins,
		"money": func(v float64, cur string) string {
			if na(v) {
				return "n/a"
			}
			return moneyText(v, cur)
		},
		"num": func(v float64, prec int) string {
			if na(v) {
				return "n/a"
			}
			return fmt.Sprintf("%.*f", prec, v)
		},
		"pair":  u.pair,
		"known": func(v float64) bool { return !na(v) },
		"sub":   func(a, b float64) float64 { return a - b },
		"add":   func(a, b float64) float64 { return a + b },
		"mul":   func(a, b float64) float64 { return a * b },
		"abs":   math.Abs,
	}
}

// messageTemplates is a rule's message template twice: with SI units first
// (Transition.Message) and with IP units first (Transition.MessageIP).
type messageTemplates struct{ si, ip *template.Template }

// parseMessage compiles a rule's message template.
func parseMessage(id, text string) (messageTemplates, error) {
	if strings.TrimSpace(text) == "" {
		text = "{{.Title}}"
	}
	var m messageTemplates
	for _, x := range []struct {
		t **template.Template
		u unitFmt
	}{{&m.si, unitFmt{}}, {&m.ip, unitFmt{ip: true}}} {
		t, err := template.New(id).Funcs(messageFuncs(x.u)).Option("missingkey=zero").Parse(text)
		if err != nil {
			return m, fmt.Errorf("message: %w", err)
		}
		*x.t = t
	}
	return m, nil
}

// render executes the templates, SI first and IP first; a failing template
// yields the title and the error text rather than losing the fault.
func (c *compiled) render(d *msgData) (si, ip string) {
	return execMessage(c.tmpl.si, d), execMessage(c.tmpl.ip, d)
}

func execMessage(t *template.Template, d *msgData) string {
	var b strings.Builder
	if err := t.Execute(&b, d); err != nil {
		return d.Title + " (message template error: " + err.Error() + ")"
	}
	return strings.Join(strings.Fields(b.String()), " ")
}
