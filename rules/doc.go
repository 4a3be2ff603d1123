// Package rules is risewatch's decision layer. It turns the running evidence
// the fdd engine computes for every terminal and loop (fdd.Evidence,
// fdd.LoopEvidence) into faults a practitioner can act on: which condition,
// for how long, under which operating gates, how severe, what it costs per
// week, what probably caused it and what to check first.
//
// # Rules
//
// Rules are YAML. A built-in set is embedded (builtin.yaml); a site file can
// change a built-in rule by its ID (thresholds, persistence, severity,
// disable, terminal exceptions) and add rules of its own. Each rule names
// evidence fields by their `rule:"name"` struct tag, compares them with
// thresholds (numbers in SI, or quantities with units such as "5 F" read by
// package units), groups comparisons with all/any/not, requires gates
// (usable, steady, plant_on, fan_on, occupied, heating_season, or their
// negation with "!"), and holds the condition for a persistence time before
// a fault opens: one run of `for` (short gaps with the gates failing are
// bridged), or with `within` a total of `for` inside the last `within`,
// kept in within/24 bins, for faults that come and go with the load
// (the built-in hunting rule: 4 h within 24 h). A fault clears with hysteresis: either an explicit
// clear_when group or the negation of the open condition evaluated with each
// comparison's separate clear threshold, held for clear_for. A terminal
// rule may add `evidence_when`, a condition choosing which record its fault
// shows (in transitions, e-mails and reports): the latest in which it also
// holds, kept through the pending run, else the latest in which the
// condition holds; the built-in fouled and starved rules show a steady
// record with the valve at 60 % or more, where a capacity loss is seen.
//
// # Why structured YAML and not an expression language
//
// The hot-path goal is at least 10 million terminal-samples per second per
// core for evidence plus rules, with no allocation per sample. Conditions are
// therefore compiled once at load time: reflection over the Evidence struct
// tags resolves every field name to a byte offset and type, and each
// condition becomes a flat pre-order array of fixed-size nodes (offset,
// operator, threshold; a group's children follow it and each node records
// where its subtree ends), evaluated by one loop with three-valued logic
// (NaN is "unknown", which neither opens nor clears a fault) and no
// closures or interface calls (program.go). Most samples never reach it: a
// rule whose tracker is idle can only change when its condition is true, so
// the loader also derives from each condition up to two necessary clauses
// (ORs of single comparisons, e.g. "score.leaking-valve ≥ 0.5"), and one
// short loop over those literals tells, per terminal, which rules could be
// true at all (prefilter.go). On a healthy terminal that is none: the rules
// layer then costs a gate mask, a table lookup and about fifteen compares.
// An expression library would add a dependency, an interpreter with its own
// value boxing on every evaluation (and no way to derive such clauses), and
// a second syntax for engineers to learn; the conditions people actually
// write for terminal units are comparisons of a few measured quantities
// against thresholds, which structured YAML states plainly, validates with
// line numbers, and lets a site override one threshold by name without
// re-typing an expression.
//
// # Lifecycle
//
// Every (entity, kind) pair is one fault with the stable ID
// "<entity>/<kind>". Several rules may feed one fault (the Guideline 36
// threshold rule and the model-based rule for a leaking valve); the fault is
// open while any of them is active. States: clear → pending (condition true)
// → open (after persistence) → clear (after clear persistence), and open
// again later. Acknowledge keeps a fault open and visible but marks it
// handled; suppress hides it until a date. The lifecycle state exports to
// plain structs (Export/Import) so a restart resumes without re-opening open
// faults.
//
// # Isolation
//
// A rule may list kinds it suppresses on the same entity (a failed discharge
// sensor explains a "leak"), and a loop rule may suppress terminal kinds on
// every terminal of its loop (one cold-loop fault instead of sixty
// shortfalls); explained terminal faults close with ExplainedBy set.
package rules
