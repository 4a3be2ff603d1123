package store

import (
	"context"
	"strings"
	"testing"
	"time"
)

// TestRelearnRequestsAfterUpgrade: a version-2 database's acknowledgements
// keep their IDs through the rebuild of migration 3, new rows carry on
// after them, and relearn requests are accepted only for a baseline ID.
func TestRelearnRequestsAfterUpgrade(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	at := time.Date(2025, 1, 14, 9, 0, 0, 0, time.UTC)
	old, err := Open(ctx, dir, Options{MaxVersion: 2})
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range []string{"VAV-1/leaking-valve", "VAV-2/hunting"} {
		if err := old.Acknowledge(ctx, Ack{FaultID: id, Action: ActionAck, Who: "ops", At: at}); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := old.DB().ExecContext(ctx, `INSERT INTO acknowledgements (fault_id, action, who, at) VALUES ('VAV-3/baseline', 'relearn', 'ops', 1)`); err == nil {
		t.Fatal("the version-2 schema accepted a relearn row")
	}
	before, err := old.AcksSince(ctx, time.Time{})
	if err != nil || len(before) != 2 {
		t.Fatalf("v2 acknowledgements %v (%v)", before, err)
	}
	if err := old.Close(); err != nil {
		t.Fatal(err)
	}

	st, err := Open(ctx, dir, Options{})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	req := Ack{FaultID: BaselineID("VAV-3"), Action: ActionRelearn, Who: "tech", At: at.Add(time.Hour), Note: "coil replaced"}
	if err := st.Acknowledge(ctx, req); err != nil {
		t.Fatal(err)
	}
	after, err := st.AcksSince(ctx, time.Time{})
	if err != nil || len(after) != 3 {
		t.Fatalf("after upgrade: %v (%v), want 3 rows", after, err)
	}
	for i := range before {
		if after[i].ID != before[i].ID || after[i].FaultID != before[i].FaultID {
			t.Errorf("row %d: %+v after the upgrade, was %+v", i, after[i], before[i])
		}
	}
	if r := after[2]; r.ID <= before[1].ID || r.Action != ActionRelearn || r.Note != "coil replaced" {
		t.Errorf("relearn row %+v, want an ID after %d", r, before[1].ID)
	}
	if term, ok := BaselineTerminal(after[2].FaultID); !ok || term != "VAV-3" {
		t.Errorf("BaselineTerminal(%q) = %q, %v", after[2].FaultID, term, ok)
	}
	for _, id := range []string{"VAV-3/leaking-valve", "/baseline", "VAV-3"} {
		err := st.Acknowledge(ctx, Ack{FaultID: id, Action: ActionRelearn, Who: "tech", At: at})
		if err == nil || !strings.Contains(err.Error(), "relearn request") {
			t.Errorf("relearn request for %q: %v, want a refusal", id, err)
		}
	}
	if err := st.IntegrityCheck(ctx); err != nil {
		t.Fatal(err)
	}
}
