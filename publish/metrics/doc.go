// Package metrics publishes risewatch's state as Prometheus metrics on its
// own registry (never the global default one), served at /metrics.
//
// Names follow the Prometheus naming conventions: a risewatch_ prefix, base
// units as suffix (celsius, seconds, watts, cubic_meters_per_second, ratio
// for dimensionless quantities), _total for counters, _timestamp_seconds for
// Unix times. A temperature rise (a difference) is also in celsius, which is
// the same size as kelvin. Values the engine does not have at a step
// (its NaN) are exported as NaN, not as zero.
//
// # Labels
//
// Every label value comes from the site model or from a closed set in the
// code, never from free text, so the number of series is bounded by the size
// of the site:
//
//	| label       | values                                            | bound                  |
//	|-------------|---------------------------------------------------|------------------------|
//	| site        | site.Site.Name                                    | 1 per process          |
//	| terminal    | site.Terminal.ID ("" on loop/AHU faults)          | terminals in the site  |
//	| ahu         | site.AHU.ID of the terminal (or the AHU fault)    | AHUs in the site       |
//	| loop        | site.Loop.ID of the terminal (or the loop fault)  | loops in the site      |
//	| kind        | fdd.Kind.String() ("leaking-valve", ...)          | fdd.AllKinds()         |
//	| state       | rules.State.String() (transitions counter only)   | 5                      |
//	| source      | site.SourceConfig.Name                            | sources in the site    |
//	| error_kind  | ErrorKind constants ("timeout", "refused",        | 12                     |
//	|             | "bacnet-error", "reject", "abort", "malformed"...)|                        |
//	| reason      | FrameReason ("malformed", "unmatched")            | 2                      |
//	| channel     | outbox channel ("email", "influx")                | sinks in the build     |
//	| version, revision, goversion | build info (risewatch_build_info) | 1 series        |
//
// Series count: terminals × (10 terminal gauges + terminal fault kinds) +
// loops × (loop gauges + loop fault kinds) + sources × (5 + error kinds +
// histogram buckets) + BACnet sources × 3 + a fixed set of daemon series.
// For a campus of 2,000 terminals that is about 44,000 series. A transition naming an entity that is
// not in the site is counted in risewatch_metrics_unknown_entity_total and not
// exported, so a bad message can never add a series.
//
// # Memory
//
// Per-terminal series are not gauge objects: the terminal gauges and
// risewatch_fault_active are custom collectors that build constant metrics
// at scrape time from flat arrays (twelve float64 values and two kind bit
// masks per terminal, 112 octets), with label values taken from the site
// model. /metrics streams these families as text from a copy of the
// arrays (stream.go) instead of gathering them into dto objects, so a scrape
// of 5,000 terminals allocates about 1.4 MB (the copy and the gzip writer)
// rather than a dto.Metric per series; the output is byte for byte the
// registry's. Protobuf and OpenMetrics 2.0 scrapes take the registry's path.
//
// # Metrics
//
// Terminal (labels site, terminal, ahu, loop), from fdd.Evidence:
//
//	risewatch_terminal_observed_rise_celsius         DAT − (SAT + duct gain)
//	risewatch_terminal_expected_rise_celsius         coil model at measured flows and temperatures
//	risewatch_terminal_rise_sigma_celsius            1-sigma uncertainty of the residual
//	risewatch_terminal_rise_residual_celsius         observed − expected
//	risewatch_terminal_performance_index_ratio       observed / expected
//	risewatch_terminal_apparent_ua_ratio             apparent UA multiplier vs baseline (1 = healthy)
//	risewatch_terminal_apparent_water_flow_ratio     apparent water-flow multiplier vs baseline
//	risewatch_terminal_wasted_heat_watts             heat delivered that was not wanted
//	risewatch_terminal_added_cooling_watts           cooling spent removing it
//	risewatch_terminal_heat_shortfall_watts          heat wanted but not delivered
//	risewatch_terminal_usable                        1 when the step passed the data gates
//	risewatch_terminal_evidence_timestamp_seconds    time of the step
//
// Faults, from rules.Transition:
//
//	risewatch_fault_active{site,terminal,ahu,loop,kind}  1 while open or acknowledged
//	risewatch_fault_transitions_total{site,kind,state}   transitions by target state
//
// Loops (labels site, loop), from fdd.LoopEvidence:
//
//	risewatch_loop_supply_temperature_celsius, risewatch_loop_expected_supply_temperature_celsius,
//	risewatch_loop_short_terminals_ratio, risewatch_loop_mean_performance_index_ratio
//
// Sources (label source):
//
//	risewatch_source_reads_total, risewatch_source_readings_total,
//	risewatch_source_read_errors_total{error_kind}, risewatch_source_read_duration_seconds,
//	risewatch_source_last_success_timestamp_seconds, risewatch_source_stale_points
//
// BACnet sources (label source), from the client's traffic counters:
//
//	risewatch_bacnet_frames_dropped_total{reason}  malformed or unmatched (late, duplicated) frames
//	risewatch_bacnet_retries_total                 requests resent after a timeout
//	risewatch_bacnet_trend_records_lost_total      trend-log records overwritten or cleared before they were read (counted gap)
//
// Daemon:
//
//	risewatch_build_info{version,revision,goversion}, risewatch_analysis_steps_total,
//	risewatch_analysis_step_duration_seconds, risewatch_influx_buffer_items,
//	risewatch_influx_buffer_bytes, risewatch_outbox_pending_items{channel},
//	risewatch_metrics_unknown_entity_total, and the Go runtime and process collectors
//	(with go_gc_heap_live_bytes, the live heap that daemon.memory_limit is sized against).
package metrics
