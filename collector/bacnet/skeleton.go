package bacnet

import (
	"fmt"
	"io"
	"sort"
	"strconv"
	"strings"
	"time"

	"risewatch/collector/bacnet/wire"
)

// terminalRoles are the roles a VAV terminal's own points take in the site file.
var terminalRoles = map[string]bool{"discharge": true, "airflow": true, "airflow_setpoint": true,
	"valve": true, "zone_temp": true, "zone_setpoint": true}

// WriteTable prints the survey as a plain table.
func WriteTable(w io.Writer, devs []SurveyDevice) {
	for _, d := range devs {
		fmt.Fprintf(w, "device %d  %q  at %s  max-APDU %d  %s  vendor %d\n", d.Device.Instance, d.Name, d.Device.Addr,
			d.Device.MaxAPDU, d.Device.Segmentation, d.Device.Vendor)
		if d.Err != nil {
			fmt.Fprintf(w, "  objects not read: %v\n", d.Err)
		}
		for _, o := range d.Objects {
			unit := ""
			if o.HasUnit {
				unit = UnitName(o.Units)
			}
			fmt.Fprintf(w, "  %-22s %-32q %-10s %-12s %s\n", o.ID, o.Name, unit, o.Value, o.Role)
		}
	}
}

// WriteSkeleton writes a site-file skeleton (the site YAML format) with one
// BACnet source and one terminal per device holding guessed points. Every
// guess is marked for an engineer to check; coil, valve and airflow data
// must come from the submittals.
func WriteSkeleton(w io.Writer, source, bind string, devs []SurveyDevice, now time.Time) error {
	var b strings.Builder
	sort.Slice(devs, func(i, j int) bool { return devs[i].Device.Instance < devs[j].Device.Instance })
	fmt.Fprintf(&b, "# Site skeleton written by `risewatch discover` on %s.\n", now.Format("2006-01-02 15:04"))
	b.WriteString("# Point roles were guessed from object names: check each one, fill in the\n")
	b.WriteString("# coil, valve and airflow data from the submittals, then run `risewatch config check`.\n")
	b.WriteString("site:\n  name: Discovered site   # edit\n  time_zone: UTC          # edit: the site's zone\n\n")
	fmt.Fprintf(&b, "sources:\n  - name: %s\n    kind: bacnet\n    bind: %s\n    devices:\n", source, bind)
	for _, d := range devs {
		fmt.Fprintf(&b, "      %d: %s\n", d.Device.Instance, d.Device.Addr)
	}
	b.WriteString("\nterminals:\n")
	for _, d := range devs {
		fmt.Fprintf(&b, "  - id: DEV-%d   # device %q\n    device: %d\n", d.Device.Instance, d.Name, d.Device.Instance)
		b.WriteString("    # coil: {inlet: 8 in, rows: 2}                  # edit: from the submittal\n")
		b.WriteString("    # valve: {cv: 1.0}                              # edit\n")
		b.WriteString("    # airflow: {min: 150 cfm, cooling_max: 600 cfm, heating_max: 300 cfm}   # edit\n")
		b.WriteString("    points:\n")
		used := map[string]bool{}
		var others []string
		for _, o := range d.Objects {
			if o.ID.Type == wire.ObjectTrendLog {
				others = append(others, fmt.Sprintf("trend-log:%d %q (add trend_log: %d to the point it logs)", o.ID.Instance, o.Name, o.ID.Instance))
				continue
			}
			line := pointLine(source, o)
			switch {
			case o.Role != "" && terminalRoles[o.Role] && !used[o.Role]:
				used[o.Role] = true
				fmt.Fprintf(&b, "      %s: %s   # %q, guessed\n", o.Role, line, o.Name)
			case o.Role != "":
				others = append(others, fmt.Sprintf("%s candidate: %s   # %q", o.Role, line, o.Name))
			default:
				others = append(others, fmt.Sprintf("unassigned: %s   # %q", line, o.Name))
			}
		}
		if len(used) == 0 {
			b.WriteString("      {}   # no point recognised: assign roles from the list below\n")
		}
		for _, s := range others {
			fmt.Fprintf(&b, "      # %s\n", s)
		}
	}
	_, err := io.WriteString(w, b.String())
	return err
}

func pointLine(source string, o SurveyObject) string {
	s := "{source: " + source + ", bacnet: {object: \"" + o.ID.Type.String() + ":" + strconv.FormatUint(uint64(o.ID.Instance), 10) + "\"}"
	if o.HasUnit {
		if u, ok := UnitOf(o.Units); ok {
			s += ", unit: " + quoteUnit(u.Name)
		}
	}
	return s + "}"
}

func quoteUnit(u string) string {
	if strings.ContainsAny(u, "%/") {
		return strconv.Quote(u)
	}
	return u
}
