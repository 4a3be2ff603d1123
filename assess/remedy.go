package assess

import (
	"fmt"
	"math"

	"risewatch/coilmodel"
	"risewatch/units"
)

// Remedy kinds.
const (
	RemedyAirflow  = "airflow"  // more heating airflow within the box's limit
	RemedyRows     = "rows"     // a deeper coil in the same face
	RemedyFins     = "fins"     // 12 fins per inch
	RemedyCircuits = "circuits" // more parallel circuits (less water drop, more flow)
	RemedyFace     = "face"     // oversized coil face (the next larger discharge)
	RemedyRedesign = "redesign" // a low-temperature coil for a larger water ΔT
)

// Remedy is one option for a coil that falls short, rated with the same
// model at the same supply temperature and branch pressure.
type Remedy struct {
	Kind    string
	Summary string // what changes, e.g. "3 rows", "heating max 410 cfm"
	Performance
	Rows     int
	FPI      float64
	Circuits int
	Note     string `json:",omitempty"`
}

func waterRhoCp(tC float64) float64 { return coilmodel.WaterDensity(tC) * coilmodel.WaterCp(tC) }

// variant rates a modified coil at the unit's heating airflow.
func (u *Unit) variant(c coilmodel.Coil, air, supplyC, dp, load float64) (Performance, error) {
	k, err := coilmodel.NewCalibrated(c)
	if err != nil {
		return Performance{}, err
	}
	cc := &coilCase{k: k, valve: u.Valve, airM3s: air, eatC: u.EnteringAirC, w: u.HumidityRatio, baroPa: u.BarometricPa}
	return cc.perform(supplyC, dp, load)
}

func fpiOf(c coilmodel.Coil) float64 { return units.PerMToFPI(c.Fin.PerM) }

func (u *Unit) remedy(kind, summary string, c coilmodel.Coil, p Performance, note string) Remedy {
	return Remedy{Kind: kind, Summary: summary, Performance: p, Rows: c.Rows, FPI: math.Round(fpiOf(c)*10) / 10, Circuits: c.Circuits, Note: note}
}

// remedies rates the options for a coil that falls short at supplyC.
func (u *Unit) remedies(supplyC, deltaK, dp float64, opt Options) []Remedy {
	var out []Remedy
	add := func(r Remedy, err error) {
		if err != nil {
			out = append(out, Remedy{Kind: r.Kind, Summary: r.Summary, Note: "not rated: " + err.Error()})
			return
		}
		out = append(out, r)
	}
	add(u.airflowRemedy(supplyC, dp))
	add(u.rowsRemedy(supplyC, dp))
	if fpiOf(u.Coil) < 11.5 {
		c := u.Coil
		c.Fin.PerM = units.FPIToPerM(12)
		p, err := u.variant(c, u.HeatingAirflowM3s, supplyC, dp, u.LoadW)
		add(u.remedy(RemedyFins, "12 fins per inch", c, p, ""), err)
	}
	add(u.circuitsRemedy(supplyC, dp))
	add(u.faceRemedy(supplyC, dp))
	add(u.redesignRemedy(supplyC, dp, opt.RedesignDeltaK))
	return out
}

// airflowLoad is the coil load at airflow v: the zone's share of the load
// (load at the heating airflow less the heat that airflow needs from the
// entering air to the zone setpoint) plus v's own heating from entering air
// to the zone, ρ·V·cp·(T_zone − T_entering).
func (u *Unit) airflowLoad(v float64) float64 {
	cp := coilmodel.MoistAirCp(u.HumidityRatio)
	perM3s := coilmodel.StandardAirDensity * cp * math.Max(0, u.ZoneC-u.EnteringAirC)
	zone := math.Max(0, u.LoadW-perM3s*u.HeatingAirflowM3s)
	return zone + perM3s*v
}

func (u *Unit) airflowRemedy(supplyC, dp float64) (Remedy, error) {
	lim := u.MaxAirflowM3s
	r := Remedy{Kind: RemedyAirflow, Summary: "more heating airflow"}
	if lim <= u.HeatingAirflowM3s*1.001 {
		r.Note = "the heating airflow is already the box's maximum"
		r.Performance.AirflowM3s = u.HeatingAirflowM3s
		return r, nil
	}
	margin := func(v float64) (Performance, error) {
		return u.variant(u.Coil, v, supplyC, dp, u.airflowLoad(v))
	}
	top, err := margin(lim)
	if err != nil {
		return r, err
	}
	v, p := lim, top
	if top.Met {
		v = bisect(func(x float64) bool {
			q, err := margin(x)
			return err == nil && q.Met
		}, u.HeatingAirflowM3s, lim, 0.002*lim)
		if p, err = margin(v); err != nil {
			return r, err
		}
	}
	r.Performance = p
	r.Summary = fmt.Sprintf("heating max %.0f cfm (%.0f L/s)", units.M3sToCFM(v), units.M3sToLs(v))
	r.Rows, r.FPI, r.Circuits = u.Coil.Rows, math.Round(fpiOf(u.Coil)*10)/10, u.Coil.Circuits
	if !top.Met {
		r.Note = fmt.Sprintf("short even at the box limit %.0f cfm", units.M3sToCFM(lim))
	}
	return r, nil
}

func (u *Unit) rowsRemedy(supplyC, dp float64) (Remedy, error) {
	if u.Coil.Rows >= 4 {
		return Remedy{Kind: RemedyRows, Summary: "more rows", Note: "the coil already has 4 rows"}, nil
	}
	var last Remedy
	for rows := u.Coil.Rows + 1; rows <= 4; rows++ {
		c := u.Coil
		c.Rows = rows
		p, err := u.variant(c, u.HeatingAirflowM3s, supplyC, dp, u.LoadW)
		if err != nil {
			return Remedy{Kind: RemedyRows, Summary: fmt.Sprintf("%d rows", rows)}, err
		}
		last = u.remedy(RemedyRows, fmt.Sprintf("%d rows", rows), c, p, "")
		if p.Met {
			return last, nil
		}
	}
	last.Note = "short even with 4 rows"
	return last, nil
}

func (u *Unit) circuitsRemedy(supplyC, dp float64) (Remedy, error) {
	tpr := u.Coil.TubesPerRowEff()
	if u.Coil.Circuits >= tpr {
		return Remedy{Kind: RemedyCircuits, Summary: "more circuits", Note: "already one circuit per tube"}, nil
	}
	var best Remedy
	bestCap := math.Inf(-1)
	for n := u.Coil.Circuits + 1; n <= min(tpr, 2*u.Coil.Circuits); n++ {
		c := u.Coil
		c.Circuits = n
		p, err := u.variant(c, u.HeatingAirflowM3s, supplyC, dp, u.LoadW)
		if err != nil {
			return Remedy{Kind: RemedyCircuits, Summary: fmt.Sprintf("%d circuits", n)}, err
		}
		r := u.remedy(RemedyCircuits, fmt.Sprintf("%d circuits", n), c, p, "")
		if p.Met {
			return r, nil
		}
		if p.CapacityW > bestCap {
			best, bestCap = r, p.CapacityW
		}
	}
	best.Note = "short with up to twice the circuits"
	return best, nil
}

// faceRemedy enlarges the face the way the next larger cabinet does: the
// width and tube count step of coilmodel.Preset's oversized cabinet for the
// box's inlet, or 2 in wider and one tube taller without a preset.
func (u *Unit) faceRemedy(supplyC, dp float64) (Remedy, error) {
	c := u.Coil
	tpr := c.TubesPerRowEff()
	dW, dT := units.InToM(2), 1
	if u.InletIn > 0 && !u.Oversized {
		std, err1 := coilmodel.Preset(u.InletIn, max(c.Rows, 1), 10, false)
		big, err2 := coilmodel.Preset(u.InletIn, max(c.Rows, 1), 10, true)
		if err1 == nil && err2 == nil {
			dW, dT = big.FaceWidthM-std.FaceWidthM, big.TubesPerRowEff()-std.TubesPerRowEff()
		}
	}
	c.FaceWidthM += dW
	c.TubesPerRow = tpr + dT
	c.FaceHeightM = float64(c.TubesPerRow) * c.TransversePitchM
	p, err := u.variant(c, u.HeatingAirflowM3s, supplyC, dp, u.LoadW)
	s := fmt.Sprintf("face %.1f × %.2f in", units.MToIn(c.FaceWidthM), units.MToIn(c.FaceHeightM))
	note := ""
	if u.Oversized {
		note = "the box already has the oversized face; this is one step larger again"
	}
	return u.remedy(RemedyFace, s, c, p, note), err
}

// redesignRemedy is a coil for the low supply temperature: the same face, 4
// rows, 12 fins per inch, and the most circuits (lowest water drop) that
// still carry the load at the water flow of the larger ΔT. The existing
// valve is kept; the note says when it cannot pass that flow.
func (u *Unit) redesignRemedy(supplyC, dp, deltaK float64) (Remedy, error) {
	r := Remedy{Kind: RemedyRedesign, Summary: fmt.Sprintf("4 rows, 12 FPI for a %.0f °F ΔT", units.DeltaKToF(deltaK))}
	if supplyC-deltaK <= u.EnteringAirC {
		r.Note = "the return temperature would be below the entering air"
		return r, nil
	}
	q := u.LoadW / (waterRhoCp(supplyC-deltaK/2) * deltaK)
	base := u.Coil
	base.Rows, base.Fin.PerM = 4, units.FPIToPerM(12)
	tpr := base.TubesPerRowEff()
	for n := tpr; n >= 1; n-- {
		c := base
		c.Circuits = n
		k, err := coilmodel.NewCalibrated(c)
		if err != nil {
			return r, err
		}
		cc := &coilCase{k: k, valve: u.Valve, airM3s: u.HeatingAirflowM3s, eatC: u.EnteringAirC, w: u.HumidityRatio, baroPa: u.BarometricPa}
		rt, err := cc.capacity(supplyC, q)
		if err != nil {
			return r, err
		}
		if rt.CapacityW < u.LoadW && n > 1 {
			continue
		}
		p := Performance{AirflowM3s: cc.airM3s, EnteringAirC: cc.eatC, SupplyC: supplyC, BranchDPPa: dp, LoadW: u.LoadW,
			AvailFlowM3s: q, CapacityW: rt.CapacityW, LeavingAirC: rt.LeavingAirC, LeavingWaterC: rt.LeavingWaterC,
			WaterDropPa: rt.WaterDropPa, AirDropPa: rt.AirDropPa, Regime: rt.Regime, Extrapolated: rt.Extrapolated}
		p.MarginW = p.CapacityW - p.LoadW
		p.MarginFrac = p.MarginW / p.LoadW
		p.Met = p.MarginW >= 0
		if err := cc.need(&p, supplyC, rt); err != nil {
			return r, err
		}
		out := u.remedy(RemedyRedesign, fmt.Sprintf("4 rows, 12 FPI, %d circuits for a %.0f °F ΔT", n, units.DeltaKToF(deltaK)), c, p, "")
		need := p.WaterDropPa + u.Valve.DropPa(1, q, coilmodel.WaterDensity(supplyC))
		if need > dp {
			gpm := units.M3sToGPM(q)
			psi := units.PaToPSI(math.Max(dp-p.WaterDropPa, 1))
			out.Note = fmt.Sprintf("the existing valve cannot pass %.2f gpm across %.1f psi; a valve of Cv ≥ %.2f would", gpm, units.PaToPSI(dp), gpm/math.Sqrt(psi))
			if dp <= p.WaterDropPa {
				out.Note = fmt.Sprintf("the coil alone drops %.1f psi at %.2f gpm, more than the %.1f psi branch", units.PaToPSI(p.WaterDropPa), gpm, units.PaToPSI(dp))
			}
		}
		if !p.Met {
			out.Note = "short even as a 4-row, 12 FPI coil at this ΔT"
		}
		return out, nil
	}
	return r, nil
}
