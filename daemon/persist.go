package daemon

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"time"

	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/store"
)

// State keys in the store (per shard: one data directory may hold several).
func stateKey(shard, what string) string {
	if shard == "" {
		shard = "all"
	}
	return "daemon/" + shard + "/" + what
}

// progress is what the daemon keeps beside the rules' lifecycle state.
type progress struct {
	LastStep  time.Time `json:"last_step"`  // newest analysed step: older input is a replay
	AckCursor int64     `json:"ack_cursor"` // newest acknowledgement applied
}

// jf is a float64 that survives JSON as null when NaN or infinite.
type jf float64

func (f jf) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, v, 'g', -1, 64), nil
}

func (f *jf) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = jf(math.NaN())
		return nil
	}
	v, err := strconv.ParseFloat(string(b), 64)
	*f = jf(v)
	return err
}

// baselineBlob is fdd.Baseline as stored (BlobBaseline).
type baselineBlob struct {
	Terminal        string    `json:"terminal"`
	Source          string    `json:"source"`
	UAFactor        jf        `json:"ua_factor"`
	UAFactorSigma   jf        `json:"ua_factor_sigma"`
	FlowFactor      jf        `json:"flow_factor"`
	FlowFactorSigma jf        `json:"flow_factor_sigma"`
	Correlation     jf        `json:"correlation"`
	ResidualSigmaK  jf        `json:"residual_sigma_k"`
	Points          int       `json:"points"`
	From            time.Time `json:"from"`
	To              time.Time `json:"to"`
	Rejected        string    `json:"rejected,omitempty"`
	// RejectedUA is the learned UA factor that was not adopted (with
	// Rejected set; the baseline is then the rated model).
	RejectedUA jf `json:"rejected_ua_factor,omitempty"`
	// PerfHighRef over PerfHighRefN values: the coil's healthy
	// high-command level against this baseline (absent: not seen).
	PerfHighRef  jf  `json:"perf_high_ref,omitempty"`
	PerfHighRefN int `json:"perf_high_ref_n,omitempty"`
}

func toBlob(b fdd.Baseline) baselineBlob {
	return baselineBlob{b.Terminal, b.Source, jf(b.UAFactor), jf(b.UAFactorSigma), jf(b.FlowFactor), jf(b.FlowFactorSigma),
		jf(b.Correlation), jf(b.ResidualSigmaK), b.Points, b.From, b.To, b.Rejected,
		jf(b.RejectedUAFactor), jf(b.PerfHighRef), b.PerfHighRefN}
}

func (b baselineBlob) baseline() fdd.Baseline {
	return fdd.Baseline{Terminal: b.Terminal, Source: b.Source, UAFactor: float64(b.UAFactor), UAFactorSigma: float64(b.UAFactorSigma),
		FlowFactor: float64(b.FlowFactor), FlowFactorSigma: float64(b.FlowFactorSigma), Correlation: float64(b.Correlation),
		ResidualSigmaK: float64(b.ResidualSigmaK), Points: b.Points, From: b.From, To: b.To, Rejected: b.Rejected,
		RejectedUAFactor: float64(b.RejectedUA), PerfHighRef: float64(b.PerfHighRef), PerfHighRefN: b.PerfHighRefN}
}

// settled reports whether a baseline is the end of learning and so worth
// keeping across a restart: a learned fit, or the rated model after a fit
// was rejected. A rated baseline still learning is not (a restart learns
// afresh rather than end learning early), nor one learning again after a
// fit that failed (fdd keeps Rejected set meanwhile).
func settled(source, rejected string, learning bool) bool {
	return !learning && (source == "learned" || rejected != "")
}

// loadBaselines adopts the stored settled baselines (learned, or rated after
// a rejected fit) with the coils' healthy levels.
func loadBaselines(ctx context.Context, st *store.Store, eng *fdd.Engine, terminals map[string]int) (int, error) {
	blobs, err := st.TerminalBlobs(ctx, store.BlobBaseline)
	if err != nil {
		return 0, err
	}
	var bs []fdd.Baseline
	for id, raw := range blobs {
		if _, ok := terminals[id]; !ok {
			continue // another shard's terminal
		}
		var b baselineBlob
		if err := json.Unmarshal(raw, &b); err != nil {
			return 0, fmt.Errorf("baseline of %s: %w", id, err)
		}
		if !settled(b.Source, b.Rejected, false) {
			continue
		}
		bs = append(bs, b.baseline())
	}
	if len(bs) == 0 {
		return 0, nil
	}
	return len(bs), eng.LoadBaselines(bs)
}

// saveBaselines writes the settled baselines (learned, or rated after a
// rejected fit) with the coils' healthy levels, and the dirty plot series,
// in one transaction.
func saveBaselines(ctx context.Context, st *store.Store, eng *fdd.Engine, ring *seriesRing, ids func(int) string) (int, error) {
	bs := eng.Baselines()
	n := 0
	err := saveSeries(ctx, st, ring, ids, func(tx *store.Tx) error {
		for i, b := range bs {
			if _, learning := eng.Baseline(i); !settled(b.Source, b.Rejected, learning) {
				continue
			}
			raw, err := json.Marshal(toBlob(b))
			if err != nil {
				return err
			}
			if err := tx.PutTerminalBlob(ctx, b.Terminal, store.BlobBaseline, raw); err != nil {
				return err
			}
			n++
		}
		return nil
	})
	return n, err
}

// saveSeries merges the dirty terminals' closed hours into their stored
// series blobs in one transaction (with also, when set, in the same one),
// then drops those hours from memory; on failure they stay and are tried
// again next time.
func saveSeries(ctx context.Context, st *store.Store, ring *seriesRing, ids func(int) string, also func(*store.Tx) error) error {
	dirty := ring.takeDirty()
	var stored [][2]int32 // terminal, newest pend hour written
	err := st.Update(ctx, func(tx *store.Tx) error {
		if also != nil {
			if err := also(tx); err != nil {
				return err
			}
		}
		stored = stored[:0]
		for _, ti := range dirty {
			old, _, _, err := tx.TerminalBlob(ctx, ids(ti), BlobSeries)
			if err != nil {
				return err
			}
			blob, upto := ring.merged(ti, old)
			if err := tx.PutTerminalBlob(ctx, ids(ti), BlobSeries, blob); err != nil {
				return err
			}
			stored = append(stored, [2]int32{int32(ti), upto})
		}
		return nil
	})
	if err != nil {
		for _, ti := range dirty { // try again next time
			ring.mu.Lock()
			ring.dirty[ti] = true
			ring.mu.Unlock()
		}
		return err
	}
	for _, s := range stored { // in the store now: out of memory
		ring.dropStored(int(s[0]), s[1])
	}
	return nil
}

// storedSeries reads a terminal's series blob from the store (the ring's
// closed hours).
func storedSeries(st *store.Store, ids func(int) string) func(context.Context, int) ([]byte, error) {
	return func(ctx context.Context, ti int) ([]byte, error) {
		b, _, _, err := st.TerminalBlob(ctx, ids(ti), BlobSeries)
		return b, err
	}
}

// loadSeries restores the plot series of the site's terminals.
func loadSeries(ctx context.Context, st *store.Store, ring *seriesRing, terminals map[string]int) error {
	blobs, err := st.TerminalBlobs(ctx, BlobSeries)
	if err != nil {
		return err
	}
	for id, raw := range blobs {
		if ti, ok := terminals[id]; ok {
			if err := ring.unmarshal(ti, raw); err != nil {
				return fmt.Errorf("series of %s: %w", id, err)
			}
		}
	}
	return nil
}

// loadLifecycle restores the rules' lifecycle state and the progress marks.
func loadLifecycle(ctx context.Context, st *store.Store, shard string, ev *rules.Evaluator) (progress, rules.ImportStats, error) {
	var pr progress
	var is rules.ImportStats
	if raw, ok, err := st.LoadState(ctx, stateKey(shard, "progress")); err != nil {
		return pr, is, err
	} else if ok {
		if err := json.Unmarshal(raw, &pr); err != nil {
			return pr, is, fmt.Errorf("daemon progress: %w", err)
		}
	}
	raw, ok, err := st.LoadState(ctx, stateKey(shard, "lifecycle"))
	if err != nil || !ok {
		return pr, is, err
	}
	var snap rules.Snapshot
	if err := json.Unmarshal(raw, &snap); err != nil {
		return pr, is, fmt.Errorf("rules lifecycle state: %w", err)
	}
	is, err = ev.Import(snap)
	return pr, is, err
}
