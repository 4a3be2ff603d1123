package eval

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"
	"time"

	"risewatch/fdd"
	"risewatch/sim"
)

// Truth is one injected fault.
type Truth struct {
	Entity   string
	Kind     fdd.Kind
	Severity float64
	Start    time.Time
	End      time.Time
	Detail   string
}

// FromSim converts the simulator's ground truth.
func FromSim(gt []sim.FaultRecord) ([]Truth, error) {
	out := make([]Truth, 0, len(gt))
	for _, r := range gt {
		k, ok := fdd.ParseKind(r.Kind)
		if !ok {
			return nil, fmt.Errorf("ground truth: unknown fault kind %q on %s", r.Kind, r.Entity)
		}
		out = append(out, Truth{Entity: r.Entity, Kind: k, Severity: r.Severity, Start: r.Start, End: r.End, Detail: r.Detail})
	}
	return out, nil
}

// ReadGroundTruth reads the simulator's ground_truth.csv
// (entity,fault,severity,start,end,detail; RFC 3339 times).
func ReadGroundTruth(path string) ([]Truth, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("ground truth: %w", err)
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.FieldsPerRecord = -1
	var out []Truth
	for line := 1; ; line++ {
		rec, err := r.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", path, err)
		}
		if line == 1 && len(rec) > 0 && rec[0] == "entity" {
			continue
		}
		if len(rec) < 5 {
			return nil, fmt.Errorf("%s:%d: want entity,fault,severity,start,end[,detail]", path, line)
		}
		k, ok := fdd.ParseKind(strings.TrimSpace(rec[1]))
		if !ok {
			return nil, fmt.Errorf("%s:%d: unknown fault kind %q", path, line, rec[1])
		}
		sev, err := strconv.ParseFloat(strings.TrimSpace(rec[2]), 64)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: severity %q: %w", path, line, rec[2], err)
		}
		st, err1 := time.Parse(time.RFC3339, strings.TrimSpace(rec[3]))
		en, err2 := time.Parse(time.RFC3339, strings.TrimSpace(rec[4]))
		if err := errors.Join(err1, err2); err != nil {
			return nil, fmt.Errorf("%s:%d: %w", path, line, err)
		}
		t := Truth{Entity: strings.TrimSpace(rec[0]), Kind: k, Severity: sev, Start: st, End: en}
		if len(rec) > 5 {
			t.Detail = rec[5]
		}
		out = append(out, t)
	}
	return out, nil
}

// Within keeps the truths active at some time in [from, to): a fault that
// starts after the analysed period was not there to be found.
func Within(truths []Truth, from, to time.Time) []Truth {
	var out []Truth
	for _, t := range truths {
		if t.Start.Before(to) && t.End.After(from) {
			out = append(out, t)
		}
	}
	return out
}
