package coilmodel

import (
	"testing"

	"risewatch/units"
)

func benchCoil(b *testing.B) Coil {
	c, err := Preset(12, 2, 10, false)
	if err != nil {
		b.Fatal(err)
	}
	return c
}

// Benchmarks report wall-clock ns/op and, on Unix, cpu-ns/op (process CPU
// time per iteration, see cpuMeter). On a shared machine run them with
// -cpu 1 and compare cpu-ns/op; wall time there includes waiting for a core:
//
//	go test ./coilmodel -run '^$' -bench . -cpu 1 -count 10 -benchtime 200000x
var benchOp = Operating{AirflowM3s: units.CFMToM3s(500), EnteringAirC: units.FToC(55), WaterFlowM3s: units.GPMToM3s(1.5), EnteringWaterC: units.FToC(180)}

// BenchmarkRateFromGeometry: a full rating from geometry (validation, areas,
// correlations, hydraulics).
func BenchmarkRateFromGeometry(b *testing.B) {
	c := benchCoil(b)
	b.ReportAllocs()
	var sink float64
	cpu := startCPU()
	for b.Loop() {
		r, err := Rate(c, benchOp)
		if err != nil {
			b.Fatal(err)
		}
		sink += r.CapacityW
	}
	cpu.report(b)
	_ = sink
}

// BenchmarkExpectedRiseCalibrated: the detector's hot path with the geometry cached.
func BenchmarkExpectedRiseCalibrated(b *testing.B) {
	k, err := NewCalibrated(benchCoil(b))
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	var sink float64
	op := benchOp
	cpu := startCPU()
	for i := 0; b.Loop(); i++ {
		op.WaterFlowM3s = benchOp.WaterFlowM3s * (1 + float64(i&7)*0.01)
		sink += k.ExpectedRise(op)
	}
	cpu.report(b)
	_ = sink
}

func BenchmarkRiseAndGrad(b *testing.B) {
	k, _ := NewCalibrated(benchCoil(b))
	b.ReportAllocs()
	cpu := startCPU()
	for b.Loop() {
		k.RiseAndGrad(benchOp)
	}
	cpu.report(b)
}

func BenchmarkInvertUA(b *testing.B) {
	k, _ := NewCalibrated(benchCoil(b))
	r, _ := k.Rate(benchOp)
	b.ReportAllocs()
	cpu := startCPU()
	for b.Loop() {
		if _, err := k.InvertUA(benchOp, r.LeavingAirC); err != nil {
			b.Fatal(err)
		}
	}
	cpu.report(b)
}

// BenchmarkRiseSensitivities: the rise and its airflow, water-flow and ln UA
// sensitivities at the detector's steps (one full evaluation plus the
// frozen-property partial re-computations); BenchmarkFourRuns is the same
// by four full evaluations.
func BenchmarkRiseSensitivities(b *testing.B) {
	k, err := NewCalibrated(benchCoil(b))
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	var sink float64
	op := benchOp
	cpu := startCPU()
	for i := 0; b.Loop(); i++ {
		op.WaterFlowM3s = benchOp.WaterFlowM3s * (1 + float64(i&7)*0.01)
		s := k.RiseSensitivities(op, 1, fddSteps(op))
		sink += s.RiseK + s.DLnUA
	}
	cpu.report(b)
	_ = sink
}

func BenchmarkFourRuns(b *testing.B) {
	k, err := NewCalibrated(benchCoil(b))
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	var sink float64
	op := benchOp
	cpu := startCPU()
	for i := 0; b.Loop(); i++ {
		op.WaterFlowM3s = benchOp.WaterFlowM3s * (1 + float64(i&7)*0.01)
		s := forward(k, op, 1, fddSteps(op))
		sink += s.RiseK + s.DLnUA
	}
	cpu.report(b)
	_ = sink
}
