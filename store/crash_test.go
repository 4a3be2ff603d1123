package store

import (
	"bufio"
	"context"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"strconv"
	"sync"
	"testing"
	"time"
)

// The crash test re-executes the test binary as a child that commits
// transactions in a loop and reports each one on stdout after COMMIT
// returns; the parent kills it with SIGKILL at random moments.
const (
	crashDirEnv   = "RISEWATCH_STORE_CRASH_DIR"
	crashStartEnv = "RISEWATCH_STORE_CRASH_START"
)

func TestMain(m *testing.M) {
	if dir := os.Getenv(crashDirEnv); dir != "" {
		start, _ := strconv.Atoi(os.Getenv(crashStartEnv))
		crashChild(dir, start)
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// crashChild writes one acknowledgement, one outbox item and one checkpoint
// per transaction, forever, and prints the transaction number after commit.
func crashChild(dir string, start int) {
	ctx := context.Background()
	st, err := Open(ctx, dir, Options{})
	if err != nil {
		fmt.Fprintln(os.Stderr, "child open:", err)
		os.Exit(2)
	}
	at := time.Date(2025, 1, 14, 0, 0, 0, 0, time.UTC)
	for i := start; ; i++ {
		err := st.Update(ctx, func(tx *Tx) error {
			if err := tx.Acknowledge(ctx, Ack{FaultID: "crash", Action: ActionAck, Who: "child",
				At: at.Add(time.Duration(i) * time.Second), Note: strconv.Itoa(i)}); err != nil {
				return err
			}
			if err := tx.Enqueue(ctx, "crash-"+strconv.Itoa(i), "email", make([]byte, 512)); err != nil {
				return err
			}
			return tx.PutCheckpoint(ctx, "crash/last", []byte(strconv.Itoa(i)))
		})
		if err != nil {
			fmt.Fprintln(os.Stderr, "child commit:", err)
			os.Exit(3)
		}
		if _, err := fmt.Fprintln(os.Stdout, i); err != nil {
			os.Exit(4)
		}
	}
}

func TestCrashSafety(t *testing.T) {
	rounds := 20
	if testing.Short() {
		rounds = 5
	}
	dir := t.TempDir()
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(7, 11)) // fixed seed: the kill schedule is repeatable
	next := 0
	var committed []int
	deadline := time.Now().Add(20 * time.Second)
	for round := 0; round < rounds && time.Now().Before(deadline); round++ {
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), crashDirEnv+"="+dir, crashStartEnv+"="+strconv.Itoa(next))
		cmd.Stderr = os.Stderr
		out, err := cmd.StdoutPipe()
		if err != nil {
			t.Fatal(err)
		}
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		var mu sync.Mutex
		var acked []int
		done := make(chan struct{})
		go func() {
			defer close(done)
			sc := bufio.NewScanner(out)
			for sc.Scan() {
				n, err := strconv.Atoi(sc.Text())
				if err != nil {
					continue // a line cut by the kill
				}
				mu.Lock()
				acked = append(acked, n)
				mu.Unlock()
			}
		}()
		time.Sleep(time.Duration(20+rng.IntN(230)) * time.Millisecond)
		if err := cmd.Process.Kill(); err != nil { // SIGKILL
			t.Fatal(err)
		}
		<-done
		_ = cmd.Wait()
		committed = append(committed, acked...)

		st, err := Open(ctx, dir, Options{})
		if err != nil {
			t.Fatalf("round %d: reopen after kill: %v", round, err)
		}
		if err := st.IntegrityCheck(ctx); err != nil {
			t.Fatalf("round %d: %v", round, err)
		}
		next = verifyCrashRound(t, st, round, committed)
		st.Close()
	}
	if len(committed) == 0 {
		t.Fatal("the child never committed: the test proved nothing")
	}
	t.Logf("%d transactions acknowledged by the child across the kills, all present", len(committed))
}

// verifyCrashRound checks that every acknowledged transaction is present and
// that each transaction is all-or-nothing; it returns the next number to use.
func verifyCrashRound(t *testing.T, st *Store, round int, committed []int) int {
	t.Helper()
	ctx := context.Background()
	acks, err := st.Acks(ctx, "crash")
	if err != nil {
		t.Fatal(err)
	}
	have := map[int]bool{}
	maxN := -1
	for _, a := range acks {
		n, _ := strconv.Atoi(a.Note)
		have[n] = true
		maxN = max(maxN, n)
	}
	for _, n := range committed {
		if !have[n] {
			t.Fatalf("round %d: transaction %d was acknowledged after COMMIT but is missing", round, n)
		}
	}
	items, _, err := st.Pending(ctx, "email")
	if err != nil {
		t.Fatal(err)
	}
	if items != len(acks) {
		t.Fatalf("round %d: %d acknowledgements but %d outbox items: a transaction was torn", round, len(acks), items)
	}
	cp, ok, err := st.Checkpoints("").Get("crash/last")
	if err != nil {
		t.Fatal(err)
	}
	if maxN >= 0 && (!ok || string(cp) != strconv.Itoa(maxN)) {
		t.Fatalf("round %d: checkpoint %q, want %d (last committed)", round, cp, maxN)
	}
	return maxN + 1
}
