package bacnet

import (
	"strings"
	"testing"
	"time"

	"risewatch/collector/bacnet/wire"
	"risewatch/sim/bacnetdev"
)

func TestRoleGuesses(t *testing.T) {
	g, err := NewRoleGuesser(nil)
	if err != nil {
		t.Fatal(err)
	}
	// Invented names in common BAS naming styles (common practice).
	for name, want := range map[string]string{
		"VAV-2-07 DAT": "discharge", "Discharge Air Temp": "discharge", "AirFlow": "airflow",
		"Flow Setpoint": "airflow_setpoint", "HW Valve": "valve", "Zone Temp": "zone_temp",
		"ZN-T SP": "zone_setpoint", "AHU-1 SAT": "supply_air", "SF Status": "fan_status",
		"HWST": "supply_temp", "Lobby Light": "",
	} {
		if got := g.Guess(name); got != want {
			t.Errorf("%q: guessed %q, want %q", name, got, want)
		}
	}
	if _, err := NewRoleGuesser([]byte("- role: x\n  patterns: ['(']\n")); err == nil {
		t.Error("bad pattern accepted")
	}
}

func TestSurveyAndSkeleton(t *testing.T) {
	s, dev := newSim(t, bacnetdev.DeviceConfig{Instance: 70, Name: "VAV-2-07", MaxAPDU: 206}, 0)
	dev.AddObject(bacnetdev.Object{ID: ai(1), Name: "VAV-2-07 DAT", Units: uint32(UnitDegreesFahrenheit), Value: 88})
	dev.AddObject(bacnetdev.Object{ID: ai(2), Name: "VAV-2-07 AirFlow", Units: uint32(UnitCubicFeetPerMinute), Value: 300})
	dev.AddObject(bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectAnalogOutput, Instance: 1}, Name: "HW Valve", Units: uint32(UnitPercent)})
	dev.AddObject(bacnetdev.Object{ID: wire.ObjectID{Type: wire.ObjectBinaryValue, Instance: 1}, Name: "Occupied"})
	dev.AddTrendLog(bacnetdev.TrendLogConfig{Instance: 1, Name: "DAT log", Logged: ai(1)})
	for i := 3; i < 40; i++ { // enough objects that the whole object-list does not fit 206 octets
		dev.AddObject(bacnetdev.Object{ID: ai(uint32(i)), Name: "Spare", Units: uint32(UnitNoUnits)})
	}
	c := newClient(t, Options{})
	d := discoverOne(t, c, s.Addr(), 70)
	g, _ := NewRoleGuesser(nil)
	sd := Survey(ctxT(t), c, d, g)
	if sd.Err != nil || sd.Name != "VAV-2-07" || len(sd.Objects) != 42 {
		t.Fatalf("survey: %v %q %d objects", sd.Err, sd.Name, len(sd.Objects))
	}
	var b strings.Builder
	if err := WriteSkeleton(&b, "bas", "0.0.0.0:47808", []SurveyDevice{sd}, time.Date(2025, 1, 1, 0, 0, 0, 0, time.UTC)); err != nil {
		t.Fatal(err)
	}
	y := b.String()
	for _, want := range []string{
		`discharge: {source: bas, bacnet: {object: "analog-input:1"}, unit: degF}`,
		`airflow: {source: bas, bacnet: {object: "analog-input:2"}, unit: cfm}`,
		`valve: {source: bas, bacnet: {object: "analog-output:1"}, unit: "%"}`,
		`occupancy candidate`, `trend-log:1 "DAT log"`, "70: " + s.Addr().String(),
	} {
		if !strings.Contains(y, want) {
			t.Errorf("skeleton lacks %q:\n%s", want, y)
		}
	}
}
