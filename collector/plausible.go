package collector

// Plausibility ranges of the zone readings, °C [I, common practice]: a room
// sensor reading outside 0-45 °C is open, shorted or in the wrong unit, and
// a heating setpoint outside 5-35 °C is not one an occupied space uses.
// Zone temperature and setpoint never gate the coil evidence; readings
// outside these ranges are treated as missing by every consumer.
const (
	ZoneMinC, ZoneMaxC       = 0.0, 45.0
	ZoneSetMinC, ZoneSetMaxC = 5.0, 35.0
)

// ZoneOK reports whether s carries a zone temperature that is present
// (not flagged, not NaN) and inside [ZoneMinC, ZoneMaxC].
func (s *Sample) ZoneOK() bool {
	return s.Flags&FlagZone == 0 && s.ZoneC >= ZoneMinC && s.ZoneC <= ZoneMaxC
}

// ZoneSetOK reports whether s carries a zone heating setpoint that is
// present and inside [ZoneSetMinC, ZoneSetMaxC].
func (s *Sample) ZoneSetOK() bool {
	return s.Flags&FlagZoneSet == 0 && s.ZoneSetC >= ZoneSetMinC && s.ZoneSetC <= ZoneSetMaxC
}
