// Package eval scores the detector (fdd evidence plus rules) against ground
// truth: per fault kind the detection rate, isolation rate and median time
// to detect (wall-clock and heating-operation hours), and false alarms per
// 1,000 terminal-weeks on terminals without an injected fault and on a
// fault-free twin of the campus.
//
// Definitions used throughout:
//   - An alarm episode is a fault that opened (including opened while
//     suppressed) and was not later closed as explained by another fault.
//   - A true fault is detected when an episode of any kind opens on its
//     entity (for a cold loop: on the loop) between its start and 24 h after
//     its end; it is isolated when the kind with the longest open time among
//     those episodes during the fault window is the true kind.
//   - Time to detect is from the fault's start to the first episode of the
//     true kind; heating-operation time counts only minutes with the AHU fan
//     and the hot-water plant on.
//   - A false alarm is an episode with no true fault on its entity (or on its
//     loop for loop-explained kinds) active at the time it opened (with the
//     same 24 h grace after a fault ends). Rates are per 1,000 weeks of
//     terminal time with no true fault on the terminal or its loop.
package eval
