// Package influx reads trends that a building automation system already
// writes to InfluxDB. It implements collector.Source: for every site point of
// kind PointInflux on its source, it runs one Flux query per time page
// (measurement, field and tag filters from site.InfluxRef), converts the
// values to SI with the point's unit, and checkpoints each point's position
// after the page has been handed on, so a restart continues where it stopped.
//
// History mode (End set) reads [Start, End) and returns nil; follow mode (End
// zero) polls up to now − Lag forever. Pages advance over all points together,
// so the assembler receives the points of one time window side by side.
//
// The Flux used is the subset InfluxDB 1.8 (with flux-enabled) and 2.x share:
// from, range, filter, keep, sort.
package influx
