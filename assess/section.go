package assess

import (
	"fmt"

	"risewatch/publish/report"
)

// maxSectionRows bounds the terminal rows the weekly report shows (the
// worst first); `risewatch assess` lists them all.
const maxSectionRows = 40

// Section returns the readiness summary for the weekly report
// (publish/report.Input.Sections): the loop lines as the introduction and
// the ranked terminals (worst shortfall first, at most 40) as the table, in
// IP units when ip is set, SI otherwise.
func (a *Assessment) Section(ip bool) report.Section {
	u, other := unitSys{ip}, unitSys{!ip}
	s := report.Section{
		Title: fmt.Sprintf("Low-temperature hot-water readiness at %s %s (%s %s) supply", u.temp(a.Conditions.SupplyC), u.tempUnit(),
			other.temp(a.Conditions.SupplyC), other.tempUnit()),
		Intro: []string{"Each terminal's existing coil is rated with the coil model at its heating airflow with the valve fully open " +
			"across the branch pressure, against its heating load. Advisory: confirm selections with the coil maker."},
		Header: []string{"Terminal", "Loop", "Status", "Load " + u.heatUnit(), "Capacity " + u.heatUnit(), "Margin",
			"Min supply " + u.tempUnit(), "First option that meets"},
	}
	for _, l := range a.Loops {
		s.Intro = append(s.Intro, a.loopLine(l, u))
	}
	for i := range a.Results {
		if len(s.Rows) >= maxSectionRows {
			// The weekly CSV is the fault work list; the whole ranking
			// is the assess command's.
			s.Intro = append(s.Intro, fmt.Sprintf("%d more terminals, nearer to meeting their load, are not shown; "+
				"risewatch assess --supply %s%s lists them all (--csv for a spreadsheet).",
				len(a.Results)-maxSectionRows, u.temp(a.Conditions.SupplyC), map[bool]string{true: "F", false: "C --si"}[ip]))
			break
		}
		r := &a.Results[i]
		best := "—"
		if b := r.BestRemedy(); b != nil {
			best = b.Summary
		}
		if r.Error != "" {
			s.Rows = append(s.Rows, []string{r.Terminal, r.Loop, r.Status, "", "", "", "", r.Error})
			continue
		}
		s.Rows = append(s.Rows, []string{r.Terminal, r.Loop, r.Status, u.heat(r.LoadW), u.heat(r.CapacityW), pct(r.MarginFrac),
			u.temp(r.MinSupplyC), best})
	}
	return s
}
