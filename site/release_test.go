package site

import "testing"

func TestReleaseAddresses(t *testing.T) {
	s, err := Parse("layers.yaml", []byte(layered))
	if err != nil {
		t.Fatal(err)
	}
	var before []PointRef
	for _, u := range s.Points() {
		before = append(before, *u.Ref)
	}
	if s.Terminals[s.TerminalIndex["T4"]].Points.Discharge.BACnet == nil {
		t.Fatal("T4's discharge should be a BACnet point")
	}
	s.ReleaseAddresses()
	after := s.Points()
	if len(after) != len(before) {
		t.Fatalf("%d points after release, %d before", len(after), len(before))
	}
	for i, u := range after {
		a, b := *u.Ref, before[i]
		if a.BACnet != nil || a.Influx != nil {
			t.Errorf("point %s: address kept", a.Name)
		}
		b.BACnet, b.Influx = nil, nil
		if a.Name != b.Name || a.Kind != b.Kind || a.Source != b.Source || a.Column != b.Column || a.Unit != b.Unit ||
			a.Binary != b.Binary || a.Fixed != b.Fixed {
			t.Errorf("point %d: %+v after release, %+v before", i, a, b)
		}
	}
}
