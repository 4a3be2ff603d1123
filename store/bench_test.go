package store

import (
	"context"
	"strconv"
	"testing"
	"time"
)

func BenchmarkRecordTransition(b *testing.B) {
	st, err := Open(context.Background(), b.TempDir(), Options{})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	ctx := context.Background()
	tr := sampleTransition(time.Date(2025, 1, 14, 6, 0, 0, 0, time.UTC))
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		tr.At = tr.At.Add(time.Minute)
		if err := st.RecordTransition(ctx, tr); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEnqueueStep is one analysis step's InfluxDB payload (64 KiB) per
// committed transaction, the sink's write pattern.
func BenchmarkEnqueueStep(b *testing.B) {
	st, err := Open(context.Background(), b.TempDir(), Options{})
	if err != nil {
		b.Fatal(err)
	}
	defer st.Close()
	ctx := context.Background()
	payload := make([]byte, 64<<10)
	b.SetBytes(int64(len(payload)))
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		if err := st.Enqueue(ctx, "step-"+strconv.Itoa(i), "influx", payload); err != nil {
			b.Fatal(err)
		}
	}
}
