// Package influx is the InfluxDB sink: per analysis step it writes every
// terminal's observations, expected values and residuals (measurement
// risewatch_terminal), every loop's evidence (risewatch_loop) and every
// fault transition (risewatch_fault_event), through the store's outbox so
// that an outage of the server loses nothing and a replay duplicates nothing.
//
// Flow: Add* → Commit (gzip'd line protocol in the outbox, durable) → Run
// (influxdb-client-go/v2 non-blocking write API, one batch per outbox item,
// Flush, mark sent; on failure mark failed with a doubling back-off from
// RetryBase to RetryMax). Points carry the step or transition time as their
// timestamp and tags from the site model only (site, terminal, ahu, loop,
// kind, ...), so InfluxDB's "same series and timestamp replaces the point"
// rule (InfluxDB 1.8 documentation, "Duplicate points") makes a replay
// idempotent.
//
// With no URL configured the sink is disabled: every method is a cheap no-op
// and Run returns at once, so the daemon runs from the embedded store alone.
package influx
