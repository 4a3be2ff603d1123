package sim

import (
	"context"
	"testing"
)

// BenchmarkSimulateDemoDay simulates one day (1440 one-minute steps) of the
// 60-terminal demo campus, without file output.
func BenchmarkSimulateDemoDay(b *testing.B) {
	sc, err := DemoScenario()
	if err != nil {
		b.Fatal(err)
	}
	sc, err = sc.With(1, 0)
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		if err := Run(context.Background(), sc, func(*Step) error { return nil }); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(60*1440*b.N)/b.Elapsed().Seconds(), "terminal-steps/s")
}

// BenchmarkSegmentSolve is one exact segment solve of a 2-row, 3-circuit coil.
func BenchmarkSegmentSolve(b *testing.B) {
	sc, _ := DemoScenario()
	s, err := New(sc)
	if err != nil {
		b.Fatal(err)
	}
	var t *terminal
	for i := range s.terms {
		if s.terms[i].geom.rows == 2 && s.terms[i].geom.circuits >= 3 {
			t = &s.terms[i]
			break
		}
	}
	circ := make([]float64, t.geom.circuits)
	for i := range circ {
		circ[i] = 0.02
	}
	b.ReportAllocs()
	for b.Loop() {
		t.solver.warm = false
		t.solver.solveExact(0.15, 15, circ, 80)
	}
}
