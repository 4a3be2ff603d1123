package rules

import (
	"fmt"
	"math"
	"strings"
	"text/template"

	"risewatch/units"
)

// Message templates are Go text/template text with the data below. Numbers
// are SI; the formatting functions print SI first and IP in brackets:
//
//	{{dtemp .E.leak_rise_k}}  → "3.4 K (6.1 °F)"
//	{{temp .E.hw_c}}          → "60.0 °C (140.0 °F)"
//	{{flow .E.airflow_m3s}}   → "141.6 L/s (300 cfm)"
//	{{power .Impact.WastedHeatW}} → "0.47 kW (1.6 MBH)"
//	{{energy .Impact.WeeklyHeatKWh}} → "79 kWh (2.7 therm)"
//	{{coolenergy .Impact.WeeklyCoolKWh}} → "79 kWh (22.5 ton-h)"
//	{{pct .E.valve}}          → "0 %"
//	{{mins .E.closed_min}}    → "45 min" / "3.5 h"
//	{{money .Impact.WeeklyCost}} → "12.40 USD"
//	{{num .E.rise_valve_corr 2}}, {{sub a b}}, {{add a b}}, {{mul a b}}, {{abs a}}
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

// The formatting shared by message templates and Transition.Summary: SI
// first, IP in brackets; a missing value prints as "n/a".
func siIP(f func(v float64, ip bool) string, v float64) string {
	if na(v) {
		return "n/a"
	}
	return f(v, false) + " (" + f(v, true) + ")"
}

func fmtTemp(c float64) string        { return siIP(units.FormatTemp, c) }
func fmtDTemp(k float64) string       { return siIP(units.FormatTempDiff, k) }
func fmtAirflow(m3s float64) string   { return siIP(units.FormatAirflow, m3s) }
func fmtWaterFlow(m3s float64) string { return siIP(units.FormatWaterFlow, m3s) }
func fmtPower(w float64) string       { return siIP(units.FormatPower, w) }

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

var msgFuncs = template.FuncMap{
	"temp":       fmtTemp,
	"dtemp":      fmtDTemp,
	"flow":       fmtAirflow,
	"power":      fmtPower,
	"energy":     func(kwh float64) string { return siIP(units.FormatHeatEnergy, kwh) },
	"coolenergy": func(kwh float64) string { return siIP(units.FormatCoolingEnergy, kwh) },
	"pct":        fmtPct,
	"mins":       fmtMins,
	"money": func(v float64, cur string) string {
		if na(v) {
			return "n/a"
		}
		return strings.TrimSpace(fmt.Sprintf("%.2f %s", v, cur))
	},
	"num": func(v float64, prec int) string {
		if na(v) {
			return "n/a"
		}
		return fmt.Sprintf("%.*f", prec, v)
	},
	"known": func(v float64) bool { return !na(v) },
	"sub":   func(a, b float64) float64 { return a - b },
	"add":   func(a, b float64) float64 { return a + b },
	"mul":   func(a, b float64) float64 { return a * b },
	"abs":   math.Abs,
}

// parseMessage compiles a rule's message template.
func parseMessage(id, text string) (*template.Template, error) {
	if strings.TrimSpace(text) == "" {
		text = "{{.Title}}"
	}
	t, err := template.New(id).Funcs(msgFuncs).Option("missingkey=zero").Parse(text)
	if err != nil {
		return nil, fmt.Errorf("message: %w", err)
	}
	return t, nil
}

// render executes the template; a failing template yields the title and the
// error text rather than losing the fault.
func (c *compiled) render(d *msgData) string {
	var b strings.Builder
	if err := c.tmpl.Execute(&b, d); err != nil {
		return d.Title + " (message template error: " + err.Error() + ")"
	}
	return strings.Join(strings.Fields(b.String()), " ")
}
