package influxtest

import (
	"testing"
)

func TestServerStartsAndRestarts(t *testing.T) {
	s := Start(t)
	if err := s.Write("probe,site=x v=1 1700000000000000000\n"); err != nil {
		t.Fatal(err)
	}
	s.Stop()
	s.Restart()
	vals, err := s.InfluxQL(Database, "SELECT COUNT(v) FROM probe")
	if err != nil {
		t.Fatal(err)
	}
	if len(vals) != 1 || vals[0][1].(float64) != 1 {
		t.Fatalf("after restart: %v, want one point", vals)
	}
}
