package main

import (
	"bytes"
	"context"
	"encoding/json"
	"strings"
	"testing"

	"risewatch/coilmodel"
	"risewatch/units"
)

func runCoilArgs(t *testing.T, args ...string) (string, error) {
	t.Helper()
	var out, errOut bytes.Buffer
	err := runCoil(context.Background(), args, &out, &errOut)
	return out.String() + errOut.String(), err
}

func TestCoilRateTableIP(t *testing.T) {
	out, err := runCoilArgs(t, "rate", "--airflow", "450cfm", "--eat", "55F", "--gpm", "2", "--ewt", "180F", "--rows", "2")
	if err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	// The table must show what the model computes for the same inputs.
	c, _ := coilmodel.Preset(12, 2, 10, false)
	r, _ := coilmodel.Rate(c, coilmodel.Operating{AirflowM3s: units.CFMToM3s(450), AirDensityKgM3: coilmodel.StandardAirDensity,
		EnteringAirC: units.FToC(55), WaterFlowM3s: units.GPMToM3s(2), EnteringWaterC: units.FToC(180)})
	for _, want := range []string{"capacity", units.FormatPower(r.CapacityW, true), units.FormatTemp(r.LeavingAirC, true),
		units.FormatTemp(r.LeavingWaterC, true), "in. w.c.", "ft w.c.", "turbulent", "common practice", "Advisory"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
}

func TestCoilRateSIAndJSON(t *testing.T) {
	out, err := runCoilArgs(t, "rate", "--si", "--airflow", "212", "--eat", "12.8", "--gpm", "0.126", "--ewt", "82.2", "--json")
	if err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	var res struct {
		Operating coilmodel.Operating
		Rating    struct {
			CapacityW   float64
			LeavingAirC float64
			Regime      string
		}
	}
	if err := json.Unmarshal([]byte(out), &res); err != nil {
		t.Fatalf("JSON: %v\n%s", err, out)
	}
	// bare numbers are SI with --si: 212 L/s, 12.8 °C, 0.126 L/s, 82.2 °C
	if d := res.Operating.AirflowM3s - 0.212; d*d > 1e-12 || res.Operating.EnteringWaterC != 82.2 {
		t.Errorf("operating %+v", res.Operating)
	}
	if res.Rating.CapacityW <= 0 || res.Rating.LeavingAirC <= 12.8 || res.Rating.Regime == "" {
		t.Errorf("rating %+v", res.Rating)
	}
	table, err := runCoilArgs(t, "rate", "--si", "--airflow", "212", "--eat", "12.8", "--gpm", "0.126", "--ewt", "82.2")
	if err != nil || !strings.Contains(table, "kW") || !strings.Contains(table, "°C") || strings.Contains(table, "MBH") {
		t.Errorf("SI table (%v):\n%s", err, table)
	}
}

func TestCoilRateCalibrated(t *testing.T) {
	out, err := runCoilArgs(t, "rate", "--airflow", "600cfm", "--gpm", "2", "--rows", "2", "--rated", "38MBH")
	if err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	if !strings.Contains(out, "38.0 MBH") || !strings.Contains(out, "fitted UA multiplier") {
		t.Errorf("calibrated output:\n%s", out)
	}
}

func TestCoilCompare(t *testing.T) {
	out, err := runCoilArgs(t, "compare", "--airflow", "450cfm", "--gpm", "2", "--inlet", "12")
	if err != nil {
		t.Fatalf("%v\n%s", err, out)
	}
	for _, want := range []string{"base", "EWT 120.0 °F", "2 rows", "12 FPI", "oversized face", "water for base capacity", "capacity vs base"} {
		if !strings.Contains(out, want) {
			t.Errorf("compare output lacks %q:\n%s", want, out)
		}
	}
	js, err := runCoilArgs(t, "compare", "--airflow", "450cfm", "--gpm", "2", "--vary", "ewt,rows", "--json")
	if err != nil {
		t.Fatal(err)
	}
	var rs []struct {
		Name   string
		Rating struct{ CapacityW float64 }
	}
	if err := json.Unmarshal([]byte(js), &rs); err != nil || len(rs) != 3 {
		t.Fatalf("compare JSON (%v): %s", err, js)
	}
	// common practice: 120 °F water gives much less, a second row more
	if !(rs[1].Rating.CapacityW < 0.7*rs[0].Rating.CapacityW && rs[2].Rating.CapacityW > rs[0].Rating.CapacityW) {
		t.Errorf("variants %+v", rs)
	}
}

func TestCoilErrors(t *testing.T) {
	cases := [][]string{
		{},
		{"frobnicate"},
		{"rate", "--gpm", "2"}, // no airflow
		{"rate", "--airflow", "450gpm2", "--gpm", "2"}, // bad quantity
		{"rate", "--airflow", "450F", "--gpm", "2"},    // wrong dimension
		{"rate", "--airflow", "450", "--gpm", "2", "--rows", "0"},
		{"rate", "--airflow", "450", "--gpm", "2", "--inlet", "11"},
		{"compare", "--airflow", "450", "--gpm", "2", "--vary", "colour"},
	}
	for _, args := range cases {
		if out, err := runCoilArgs(t, args...); err == nil {
			t.Errorf("%v accepted:\n%s", args, out)
		}
	}
}

func TestCoilSIDefaultsKeepTheirUnits(t *testing.T) {
	// The default EAT/EWT (55 °F, 180 °F) must not be re-read as °C under --si.
	out, err := runCoilArgs(t, "rate", "--si", "--airflow", "212", "--gpm", "0.126")
	if err != nil || !strings.Contains(out, "82.2 °C") || !strings.Contains(out, "12.8 °C") {
		t.Errorf("(%v)\n%s", err, out)
	}
}
