package web

import (
	"fmt"
	"html/template"
	"math"
	"net/http"
	"net/url"
	"sort"
	"strings"
	"time"

	"risewatch/rules"
	"risewatch/units"
)

const layout = `{{define "top"}}<!DOCTYPE html><html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{{.Title}} · risewatch</title>
<style>
body{font-family:system-ui,sans-serif;margin:0;color:#1d2430;background:#f3f5f8}
header{background:#17324d;color:#fff;padding:.6em 1.2em;display:flex;flex-wrap:wrap;gap:.3em 1.5em;align-items:baseline}
header a{color:#cfe3ff;text-decoration:none}header b{font-size:1.15em}
main{padding:1em 1.2em;max-width:78em}
.cards{display:flex;flex-wrap:wrap;gap:.8em}.card{background:#fff;border-radius:6px;padding:.7em 1em;box-shadow:0 1px 2px #0002;min-width:9em}
.card .n{font-size:1.8em;font-weight:600}.ok{color:#1d7a45}.bad{color:#b3261e}.warn{color:#a15c00}.muted{color:#6b7685}
table{border-collapse:collapse;background:#fff;width:100%;margin:.5em 0 1.2em;box-shadow:0 1px 2px #0002}
th,td{text-align:left;padding:.35em .6em;border-bottom:1px solid #e6e9ee;font-size:.92em;vertical-align:top}th{background:#e8edf3}
.pill{border-radius:9px;padding:0 .5em;font-size:.85em;background:#e8edf3}.pill.open{background:#fbe0dd}.pill.acked{background:#fff0c7}.pill.suppressed{background:#e3e3e3}
form{display:inline-block;background:#fff;padding:.6em .9em;border-radius:6px;box-shadow:0 1px 2px #0002;margin:.3em .6em .3em 0}
.notice{background:#fff4d6;padding:.6em 1em;border-radius:6px;font-size:.88em;margin-top:2em}
.scroll{overflow-x:auto;max-width:100%}svg.chart{display:block;max-width:100%;height:auto}svg.narrow{display:none}
figure.chart{margin:.6em 0}figure.chart figcaption{font-weight:600;font-size:.9em;margin-left:52px}
@media (max-width:640px){svg.wide{display:none}svg.narrow{display:block}figure.chart figcaption{margin-left:0}
table.stack tr:first-child{display:none}table.stack tr{display:block;border-bottom:1px solid #d5dae1;padding:.3em 0}
table.stack td{display:inline-block;border:0;padding:.1em .6em}table.stack td[data-l]{display:block}table.stack td[data-l]::before{content:attr(data-l) ": ";color:#6b7685}
#coil tr{display:grid;grid-template-columns:minmax(7em,auto) 1fr}}
td a,#faults td[data-l="Since"],#faults td[data-l="Cost / week"]{white-space:nowrap}
.error{background:#fbe0dd;color:#7a1712;padding:.6em 1em;border-radius:6px;font-weight:600}
</style></head><body>
<header><b>risewatch</b><a href="/">Overview</a><a href="/sources">Collectors</a><span class="muted" style="color:#9fb6cc">{{.SiteName}} · {{.Now}}</span></header><main>{{end}}
{{define "bottom"}}<p class="notice">{{.Advisory}}</p></main></body></html>{{end}}`

const overviewTmpl = `{{template "top" .}}
<h1>{{.SiteName}}</h1>
<div class="cards">
<div class="card"><div class="n">{{.Total}}</div>terminals</div>
<div class="card"><div class="n ok">{{.Healthy}}</div>no open fault</div>
<div class="card"><div class="n bad">{{.Faulted}}</div>with open faults</div>
<div class="card"><div class="n warn">{{.NoData}}</div>without usable data</div>
<div class="card"><div class="n">{{.WeeklyCost}}</div>estimated cost / week</div>
</div>
<h2>Faults, highest weekly cost first</h2>
{{if .Faults}}<div class="scroll"><table id="faults" class="stack"><tr><th>Entity</th><th>Fault</th><th>State</th><th>Since</th><th>Evidence</th><th>Cost / week</th><th>Confidence</th></tr>
{{range .Faults}}<tr><td>{{if .Link}}<a href="{{.Link}}">{{.Entity}}</a>{{else}}{{.Entity}}{{end}}</td><td>{{.Kind}}</td><td><span class="pill {{.State}}">{{.State}}</span></td><td data-l="Since">{{.Since}}</td><td data-l="Evidence">{{.Evidence}}</td><td data-l="Cost / week">{{.Cost}}</td><td data-l="Confidence">{{.Confidence}}</td></tr>
{{end}}</table></div>{{else}}<p>No open faults.</p>{{end}}
<h2>Hot-water loops</h2>
<div class="scroll"><table id="loops"><tr><th>Loop</th><th>Design supply</th><th>Terminals</th><th>Open faults</th></tr>
{{range .Loops}}<tr><td>{{.ID}}</td><td>{{.Design}}</td><td>{{.Terminals}}</td><td>{{.Faults}}</td></tr>{{end}}</table></div>
<h2>Air handlers</h2>
<div class="scroll"><table id="ahus"><tr><th>AHU</th><th>Terminals</th><th>Open faults</th><th>Latest supply air</th></tr>
{{range .AHUs}}<tr><td>{{.ID}}</td><td>{{.Terminals}}</td><td>{{.Faults}}</td><td>{{.SAT}}</td></tr>{{end}}</table></div>
<h2>Terminals</h2>
<div class="scroll"><table id="terminals"><tr><th>Terminal</th><th>AHU</th><th>Loop</th><th>Zone</th><th>Observed rise</th><th>Expected rise</th><th>Valve</th><th>State</th></tr>
{{range .Terminals}}<tr><td><a href="{{.Link}}">{{.ID}}</a></td><td>{{.AHU}}</td><td>{{.Loop}}</td><td>{{.Zone}}</td><td>{{.Obs}}</td><td>{{.Exp}}</td><td>{{.Valve}}</td><td>{{.State}}</td></tr>{{end}}</table></div>
{{template "bottom" .}}`

const terminalTmpl = `{{template "top" .}}
<h1>{{.T.ID}}</h1>
<p>{{.T.Building}} {{.T.Location}} · zone {{.T.Zone}} · AHU {{.T.AHU}} · loop {{.T.Loop}}</p>
{{.RiseChart}}
{{.ValveChart}}
{{.FlowChart}}
<h2>Coil and valve</h2>
<div class="scroll"><table id="coil"><tr><th>Box inlet</th><td>{{.Inlet}}</td><th>Rows</th><td>{{.T.Coil.Rows}}</td><th>Circuits</th><td>{{.T.Coil.Circuits}}</td></tr>
<tr><th>Fins</th><td>{{.FPI}}</td><th>Face</th><td>{{.Face}}</td><th>UA multiplier (calibration)</th><td>{{.UAMult}}</td></tr>
<tr><th>Valve Cv</th><td>{{.T.Valve.Cv}}</td><th>Airflow min / heating max</th><td>{{.Airflows}}</td><th>Rated point</th><td>{{.Rated}}</td></tr></table></div>
<h2>Baseline</h2>
<div class="scroll"><table id="baseline">{{range .Baseline}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{end}}</table></div>
<h2>Latest evidence</h2>
<div class="scroll"><table id="evidence">{{range .Evidence}}<tr><th>{{index . 0}}</th><td>{{index . 1}}</td></tr>{{else}}<tr><td>No sample analysed yet for this terminal: check its points on the <a href="/sources">collectors</a> page.</td></tr>{{end}}</table></div>
<h2>Faults</h2>
{{range .Open}}<div class="fault"><b>{{.Kind}}</b> <span class="pill {{.State}}">{{.State}}</span> since {{.Since}} — {{.Message}}
{{if .Status}}<br><span class="muted">{{.Status}}</span>{{end}}
{{if .Causes}}<p>Likely causes:</p><ol class="causes">{{range .Causes}}<li>{{.}}</li>{{end}}</ol>{{end}}
{{if .Checks}}<p>Check first — hot water scalds and is under pressure: isolate the circuit, let it cool and relieve pressure before opening anything, and follow your lock-out/tag-out procedure:</p><ol class="checks">{{range .Checks}}<li>{{.}}</li>{{end}}</ol>{{end}}
{{template "forms" .}}</div>{{else}}<p>No open faults.</p>{{end}}
<h2>History</h2>
<div class="scroll"><table id="history"><tr><th>When</th><th>Fault</th><th>From</th><th>To</th><th>Note</th></tr>
{{range .History}}<tr><td>{{index . 0}}</td><td>{{index . 1}}</td><td>{{index . 2}}</td><td>{{index . 3}}</td><td>{{index . 4}}</td></tr>{{else}}<tr><td colspan="5">No fault history.</td></tr>{{end}}</table></div>
{{template "bottom" .}}`

const formsTmpl = `{{define "forms"}}<form method="post" action="/faults/{{.IDPath}}/ack"><input type="hidden" name="csrf" value="{{.CSRF}}">
<label>Name <input name="by" required size="10" maxlength="80" value="{{.By}}"></label> <label>Note <input name="note" size="24" maxlength="500" value="{{.Note}}"></label> <button type="submit">Acknowledge</button></form>
<form method="post" action="/faults/{{.IDPath}}/snooze"><input type="hidden" name="csrf" value="{{.CSRF}}">
<label>Name <input name="by" required size="10" maxlength="80" value="{{.By}}"></label> <label>Until <input type="date" name="until" required min="{{.SnoozeMin}}" value="{{.SnoozeDefault}}"></label> <label>Note <input name="note" size="16" maxlength="500" value="{{.Note}}"></label> <button type="submit">Snooze</button></form>{{end}}`

const actionTmpl = `{{template "top" .}}<h1>{{.Heading}}</h1>{{if .Error}}<p class="error" id="error">{{.Error}}</p>{{end}}{{if .Text}}<p>{{.Text}}</p>{{end}}{{if .Fault}}{{template "forms" .Fault}}{{end}}<p><a href="{{.Back}}">{{.BackText}}</a></p>{{template "bottom" .}}`

const sourcesTmpl = `{{template "top" .}}<h1>Collectors</h1>
<div class="scroll"><table id="sources" class="stack"><tr><th>Source</th><th>Kind</th><th>Last success</th><th>Reads</th><th>Errors</th><th>Points (stale)</th><th>Last error</th></tr>
{{range .Sources}}<tr><td>{{.Name}}</td><td>{{.Kind}}</td><td data-l="Last success" class="{{.Class}}">{{.Last}}</td><td data-l="Reads">{{.Reads}}</td><td data-l="Errors">{{.Errors}}</td><td data-l="Points (stale)">{{.Points}}</td><td data-l="Last error">{{.LastError}}</td></tr>{{else}}<tr><td colspan="7">No sources configured.</td></tr>{{end}}</table></div>
{{template "bottom" .}}`

// Advisory is shown on every page.
const Advisory = "risewatch is advisory only and never writes to the building automation system. Confirm findings on site; follow local codes, the equipment makers' instructions and licensed practice. " +
	"Hot-water systems can scald and are under pressure: isolate the circuit, let it cool and relieve pressure before opening, venting or replacing valves, coils, strainers or air vents, and follow your lock-out/tag-out procedure."

func parseTemplates(ip bool) *template.Template {
	t := template.Must(template.New("layout").Parse(layout))
	template.Must(t.Parse(formsTmpl))
	for name, body := range map[string]string{"overview": overviewTmpl, "terminal": terminalTmpl, "action": actionTmpl, "sources": sourcesTmpl} {
		template.Must(t.New(name).Parse(body))
	}
	return t
}

type page struct {
	Title, SiteName, Now, Advisory string
}

func (s *Server) page(title string) page {
	st := s.b.Site()
	loc := time.UTC
	if st.Location != nil {
		loc = st.Location
	}
	return page{Title: title, SiteName: st.Name, Now: s.b.Now().In(loc).Format("Mon 2 Jan 15:04 MST"), Advisory: Advisory}
}

func (s *Server) render(w http.ResponseWriter, name string, data any) {
	w.Header().Set("Content-Type", "text/html; charset=utf-8")
	if err := s.tmpl.ExecuteTemplate(w, name, data); err != nil {
		s.log.Error("web: render", "page", name, "err", err)
	}
}

// dual writes an SI value in both units, the page's first and the other
// in brackets ("180.0 °F (82.2 °C)"), or "–" when it is unknown.
func (s *Server) dual(f func(float64, bool) string, v float64) string {
	return units.FormatPair(f, v, s.cfg.IP, "–")
}

func (s *Server) temp(c float64) string { return s.dual(units.FormatTemp, c) }

func (s *Server) dT(k float64) string { return s.dual(units.FormatTempDiff, k) }

// factor writes a dimensionless factor with two decimals, "–" when unknown.
func factor(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "–"
	}
	return fmt.Sprintf("%.2f", v)
}

func (s *Server) loc() *time.Location {
	if l := s.b.Site().Location; l != nil {
		return l
	}
	return time.UTC
}

type faultRow struct {
	Entity, Link, Kind, State, Since, Evidence, Cost, Confidence string
	cost                                                         float64
}

func (s *Server) faultRows(fs []rules.Transition) []faultRow {
	st := s.b.Site()
	cur := st.Energy.Currency
	if cur == "" {
		cur = "USD"
	}
	var out []faultRow
	for _, f := range fs {
		r := faultRow{Entity: f.Entity, Kind: f.Kind.String(), State: f.To.String(), cost: f.Impact.WeeklyCost,
			Cost: fmt.Sprintf("%s %.2f", cur, f.Impact.WeeklyCost), Confidence: fmt.Sprintf("%.0f %%", f.Confidence*100)}
		since := f.Since
		if since.IsZero() {
			since = f.At
		}
		r.Since = since.In(s.loc()).Format("Mon 2 Jan 15:04")
		if _, ok := st.TerminalIndex[f.Entity]; ok {
			r.Link = "/terminals/" + url.PathEscape(f.Entity)
		}
		// The numbers of the rule holding the fault (the analyze table's
		// digest, in the page's unit order); the rise, expected rise and
		// command of its last record where the digest has none.
		if sum := f.SummaryIn(s.cfg.IP); sum != "" && sum != f.Title {
			r.Evidence = sum
		} else {
			ev := f.Evidence
			var parts []string
			if !math.IsNaN(ev.ObservedRiseK) {
				parts = append(parts, "rise "+s.dT(ev.ObservedRiseK))
			}
			if !math.IsNaN(ev.ExpectedRiseK) && ev.ExpectedRiseK != 0 {
				parts = append(parts, "expected "+s.dT(ev.ExpectedRiseK))
			}
			if !math.IsNaN(ev.ValveFrac) {
				parts = append(parts, "valve "+units.FormatPercent(ev.ValveFrac))
			}
			r.Evidence = strings.Join(parts, ", ")
		}
		out = append(out, r)
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].cost > out[j].cost })
	return out
}

func (s *Server) overview(w http.ResponseWriter, r *http.Request) {
	st := s.b.Site()
	faults, err := s.b.Faults(r.Context())
	if err != nil {
		http.Error(w, "reading faults: "+err.Error(), http.StatusInternalServerError)
		return
	}
	faulted := map[string]bool{}
	byLoop, byAHU := map[string]int{}, map[string]int{}
	total := 0.0
	for _, f := range faults {
		faulted[f.Entity] = true
		total += f.Impact.WeeklyCost
		if f.Loop != "" {
			byLoop[f.Loop]++
		} else if f.EntityKind == rules.EntityLoop {
			byLoop[f.Entity]++
		}
		if f.AHU != "" {
			byAHU[f.AHU]++
		}
	}
	type termRow struct{ ID, Link, AHU, Loop, Zone, Obs, Exp, Valve, State string }
	type loopRow struct {
		ID, Design        string
		Terminals, Faults int
	}
	type ahuRow struct {
		ID                string
		Terminals, Faults int
		SAT               string
	}
	data := struct {
		page
		Total, Healthy, Faulted, NoData int
		WeeklyCost                      string
		Faults                          []faultRow
		Loops                           []loopRow
		AHUs                            []ahuRow
		Terminals                       []termRow
	}{page: s.page("Overview"), Total: len(st.Terminals), Faults: s.faultRows(faults)}
	cur := st.Energy.Currency
	if cur == "" {
		cur = "USD"
	}
	data.WeeklyCost = fmt.Sprintf("%s %.2f", cur, total)
	loopTerms, ahuTerms := map[string]int{}, map[string]int{}
	ahuSAT := map[string]float64{}
	data.Terminals = make([]termRow, 0, len(st.Terminals))
	for i, t := range st.Terminals {
		loopTerms[t.Loop]++
		ahuTerms[t.AHU]++
		row := termRow{ID: t.ID, Link: "/terminals/" + url.PathEscape(t.ID), AHU: t.AHU, Loop: t.Loop, Zone: t.Zone, Obs: "–", Exp: "–", Valve: "–", State: "ok"}
		ev, ok := s.b.Latest(i)
		switch {
		case faulted[t.ID]:
			row.State = "fault"
			data.Faulted++
		case !ok || !ev.Usable:
			row.State = "no data"
			data.NoData++
		default:
			data.Healthy++
		}
		if ok {
			row.Obs, row.Exp = s.dT(ev.ObservedRiseK), s.dT(ev.ExpectedRiseK)
			if !math.IsNaN(ev.ValveFrac) {
				row.Valve = units.FormatPercent(ev.ValveFrac)
			}
			if !math.IsNaN(ev.SupplyC) {
				ahuSAT[t.AHU] = ev.SupplyC
			}
		}
		data.Terminals = append(data.Terminals, row)
	}
	for _, l := range st.Loops {
		data.Loops = append(data.Loops, loopRow{ID: l.ID, Design: s.temp(l.DesignSupplyC), Terminals: loopTerms[l.ID], Faults: byLoop[l.ID]})
	}
	for _, a := range st.AHUs {
		sat := "–"
		if v, ok := ahuSAT[a.ID]; ok {
			sat = s.temp(v)
		}
		data.AHUs = append(data.AHUs, ahuRow{ID: a.ID, Terminals: ahuTerms[a.ID], Faults: byAHU[a.ID], SAT: sat})
	}
	s.render(w, "overview", data)
}

func (s *Server) terminal(w http.ResponseWriter, r *http.Request) {
	st := s.b.Site()
	id := r.PathValue("id")
	idx, ok := st.TerminalIndex[id]
	if !ok {
		s.fail(w, http.StatusNotFound, "No terminal "+id, "The site file has no terminal "+id+".", "", "")
		return
	}
	t := st.Terminals[idx]
	now := s.b.Now()
	pts, err := s.b.Series(r.Context(), idx, now.Add(-7*24*time.Hour), now)
	if err != nil {
		http.Error(w, "reading series: "+err.Error(), http.StatusInternalServerError)
		return
	}
	var xs []time.Time
	var obs, exp, valve, flow []float64
	// Each chart is drawn in the page's first unit, with the other unit
	// on its right-hand axis (both conversions are pure scales).
	rise := axis{Unit: "K", Alt: "°F", AltScale: 1 / units.KelvinPerRankine}
	air := axis{Unit: "L/s", Alt: "cfm", AltScale: units.M3sToCFM(1) / units.M3sToLs(1)}
	if s.cfg.IP {
		rise = axis{Unit: "°F", Alt: "K", AltScale: units.KelvinPerRankine}
		air = axis{Unit: "cfm", Alt: "L/s", AltScale: units.M3sToLs(1) / units.M3sToCFM(1)}
	}
	for _, p := range pts {
		xs = append(xs, p.At.In(s.loc()))
		if s.cfg.IP {
			obs, exp = append(obs, units.DeltaKToF(p.ObservedRiseK)), append(exp, units.DeltaKToF(p.ExpectedRiseK))
			flow = append(flow, units.M3sToCFM(p.AirflowM3s))
		} else {
			obs, exp = append(obs, p.ObservedRiseK), append(exp, p.ExpectedRiseK)
			flow = append(flow, units.M3sToLs(p.AirflowM3s))
		}
		valve = append(valve, p.ValveFrac*100)
	}
	zone := ""
	if len(xs) > 0 {
		zone = ", times " + xs[0].Format("MST")
	}
	data := struct {
		page
		T                                         any
		RiseChart, ValveChart, FlowChart          template.HTML
		Inlet, FPI, Face, UAMult, Airflows, Rated string
		Evidence, Baseline                        [][2]string
		Open                                      []faultForm
		History                                   [][5]string
	}{page: s.page(t.ID), T: t}
	data.RiseChart = chart("Air temperature rise, observed and expected ("+rise.Unit+" and "+rise.Alt+zone+")", rise, 260,
		[]Series{{Name: "observed", Color: "#c0392b", X: xs, Y: obs}, {Name: "expected", Color: "#2874c8", Dashed: true, X: xs, Y: exp}})
	data.ValveChart = chart("Valve command (%"+zone+")", axis{Unit: "%", Lo: 0, Hi: 100, Fixed: true}, 180,
		[]Series{{Name: "valve command %", Color: "#555", X: xs, Y: valve}})
	data.FlowChart = chart("Airflow ("+air.Unit+" and "+air.Alt+zone+")", air, 200,
		[]Series{{Name: "airflow " + air.Unit, Color: "#1d7a45", X: xs, Y: flow}})
	data.Inlet = fmt.Sprintf("%g in", t.InletIn)
	if t.Oversized {
		data.Inlet += " (oversized coil)"
	}
	data.FPI = fmt.Sprintf("%.0f FPI", units.PerMToFPI(t.Coil.Fin.PerM))
	data.Face = units.FormatLength(t.Coil.FaceWidthM, s.cfg.IP) + " × " + units.FormatLength(t.Coil.FaceHeightM, s.cfg.IP) +
		" (" + units.FormatLength(t.Coil.FaceWidthM, !s.cfg.IP) + " × " + units.FormatLength(t.Coil.FaceHeightM, !s.cfg.IP) + ")"
	um := t.Coil.UAMultiplier
	if um == 0 {
		um = 1
	}
	data.UAMult = fmt.Sprintf("%.2f", um)
	data.Airflows = s.dual(units.FormatAirflow, t.MinAirflowM3s) + " / " + s.dual(units.FormatAirflow, t.HeatingAirflowM3s)
	data.Rated = "none (geometry only)"
	if t.Rated != nil {
		data.Rated = fmt.Sprintf("%s at %s, %s, EAT %s, EWT %s", s.dual(units.FormatPower, t.Rated.CapacityW), s.dual(units.FormatAirflow, t.Rated.AirflowM3s),
			s.dual(units.FormatWaterFlow, t.Rated.WaterFlowM3s), s.temp(t.Rated.EnteringAirC), s.temp(t.Rated.EnteringWaterC))
	}
	if ev, ok := s.b.Latest(idx); ok {
		expected := s.dT(ev.ExpectedRiseK)
		if expected != "–" && !math.IsNaN(ev.SigmaK) && ev.SigmaK > 0 {
			expected += " ± " + s.dT(2*ev.SigmaK)
		}
		data.Evidence = [][2]string{
			{"At", ev.At.In(s.loc()).Format("Mon 2 Jan 15:04")},
			{"Usable / steady", fmt.Sprintf("%v / %v", ev.Usable, ev.Steady)},
			{"Valve command", percent(ev.ValveFrac)},
			{"Airflow", s.dual(units.FormatAirflow, ev.AirflowM3s)},
			{"Supply air", s.temp(ev.SupplyC)},
			{"Discharge air", s.temp(ev.DischargeC)},
			{"Hot-water supply", s.temp(ev.HotWaterC)},
			{"Observed rise", s.dT(ev.ObservedRiseK)},
			{"Expected rise (± 2σ)", expected},
			{"Apparent UA / water flow factor", factor(ev.UAFactor) + " / " + factor(ev.FlowFactor)},
			{"Leak rise with valve closed", s.dT(ev.LeakRiseK)},
		}
	}
	data.Baseline = s.baselineRows(idx, t.ID)
	faults, err := s.b.Faults(r.Context())
	if err == nil {
		for _, f := range faults {
			if f.Entity == t.ID {
				data.Open = append(data.Open, s.formFor(w, r, f))
			}
		}
	}
	hist, err := s.b.History(r.Context(), t.ID, 50)
	if err == nil {
		for _, h := range hist {
			data.History = append(data.History, [5]string{h.At.In(s.loc()).Format("2006-01-02 15:04"), h.Kind.String(), h.From.String(), h.To.String(), h.MessageIn(s.cfg.IP)})
		}
	}
	s.render(w, "terminal", data)
}

// baselineRows describe what terminal idx's expected rise is judged
// against: the learned fit with its 95 % intervals, or the rated model
// (still learning, or after a rejected fit), the coil's own healthy
// high-command level, and how to learn again after a repair.
func (s *Server) baselineRows(idx int, id string) [][2]string {
	b, learning := s.b.Baseline(idx)
	period := func() string {
		return fmt.Sprintf("%d steady heating points, %s – %s", b.Points,
			b.From.In(s.loc()).Format("2 Jan 2006 15:04"), b.To.In(s.loc()).Format("2 Jan 2006 15:04"))
	}
	var rows [][2]string
	switch {
	case b.Source == "learned":
		uaLo, uaHi, flLo, flHi := b.CI95()
		rows = append(rows, [2]string{"Model", "learned from this coil's own history"},
			[2]string{"Learning period", period()},
			[2]string{"UA / water-flow factor (95 %)", fmt.Sprintf("%.2f (%.2f–%.2f) / %.2f (%.2f–%.2f) of the rated model", b.UAFactor, uaLo, uaHi, b.FlowFactor, flLo, flHi)},
			[2]string{"Fit residual (1σ)", s.dT(b.ResidualSigmaK)})
	case b.Rejected != "":
		rows = append(rows, [2]string{"Model", "rated (submittal data): the learned fit was rejected — " + b.Rejected},
			[2]string{"Learning period", period()})
	case learning:
		rows = append(rows, [2]string{"Model", "rated (submittal data) while the baseline is learned from steady heating samples"})
	default:
		rows = append(rows, [2]string{"Model", "rated (submittal data); learning is off"})
	}
	level := "not seen healthy yet"
	if b.PerfHighRefN > 0 {
		level = fmt.Sprintf("%.2f of the model's rise (%d values)", b.PerfHighRef, b.PerfHighRefN)
	}
	rows = append(rows, [2]string{"Healthy rise at high command", level},
		[2]string{"Learn again after a repair", "risewatch relearn --config FILE --by NAME " + id})
	return rows
}

// percent writes a 0..1 fraction as a percentage, "–" when unknown.
func percent(frac float64) string {
	if math.IsNaN(frac) || math.IsInf(frac, 0) {
		return "–"
	}
	return units.FormatPercent(frac)
}
