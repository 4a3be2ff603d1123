package daemon

import (
	"context"
	"fmt"

	"risewatch/assess"
	"risewatch/publish/report"
	"risewatch/site"
	"risewatch/units"
)

// ReadinessConfig adds the low-temperature hot-water readiness section
// (package assess) to the weekly report: every coil rated at a candidate
// supply temperature against the design heating load in the site file.
type ReadinessConfig struct {
	Supply   string `yaml:"supply"`    // candidate supply temperature, e.g. "120 F" or "49 C" (required)
	DeltaT   string `yaml:"delta_t"`   // planned loop ΔT, e.g. "20 delta_degF" (default: each loop's design)
	BranchDP string `yaml:"branch_dp"` // pressure across valve and coil, e.g. "5 psi" (default: each loop's design)

	cond assess.Conditions
}

// fieldErr is a problem with one key of the section ("" for the section).
type fieldErr struct{ key, msg string }

// parse reads the quantities into Conditions (the same limits as
// `risewatch assess`).
func (r *ReadinessConfig) parse() []fieldErr {
	var errs []fieldErr
	add := func(key, format string, args ...any) {
		errs = append(errs, fieldErr{key, fmt.Sprintf(format, args...)})
	}
	var err error
	if r.Supply == "" {
		add("", "supply is required, e.g. \"120 F\"")
	} else if r.cond.SupplyC, err = units.Parse(r.Supply, units.Temperature); err != nil {
		add("supply", "supply: %v", err)
	} else if r.cond.SupplyC < 25 || r.cond.SupplyC > 110 {
		add("supply", "supply %s: must be 77 to 230 °F (25 to 110 °C)", r.Supply)
	}
	if r.DeltaT != "" {
		if r.cond.DeltaK, err = units.Parse(r.DeltaT, units.TempDiff); err != nil {
			add("delta_t", "delta_t: %v", err)
		} else if r.cond.DeltaK <= 0 || r.cond.DeltaK > 60 {
			add("delta_t", "delta_t %s: must be above 0 and at most 60 K (108 °F)", r.DeltaT)
		}
	}
	if r.BranchDP != "" {
		if r.cond.BranchDPPa, err = units.Parse(r.BranchDP, units.Pressure); err != nil {
			add("branch_dp", "branch_dp: %v", err)
		} else if r.cond.BranchDPPa <= 0 || r.cond.BranchDPPa > 1e6 {
			add("branch_dp", "branch_dp %s: must be above 0 and at most 1000 kPa", r.BranchDP)
		}
	}
	return errs
}

// AddReadiness appends the readiness section to in when the daemon
// configuration enables it (daemon.report.readiness). Loads are the design
// loads of the site file; terminals without one are listed as not assessed.
func AddReadiness(ctx context.Context, in *report.Input, s *site.Site, cfg *Config) error {
	r := cfg.Report.Readiness
	if r == nil {
		return nil
	}
	if errs := r.parse(); len(errs) > 0 {
		return fmt.Errorf("report: readiness: %s", errs[0].msg)
	}
	opt := assess.Options{Load: assess.LoadDesign}
	a, err := assess.Assess(ctx, s, assess.Prepare(s, nil, opt), r.cond, opt)
	if err != nil {
		return fmt.Errorf("report: readiness: %w", err)
	}
	in.Sections = append(in.Sections, a.Section(in.IP))
	return nil
}
