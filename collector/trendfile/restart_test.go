package trendfile

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"risewatch/collector"
	"risewatch/site"
)

// restartData writes two export files (minutes 0..299 and 300..599) of a
// 3-terminal site into dir: some points logged every few minutes (blank
// cells between, so values are held), one with a 35-minute hole (longer
// than the hold limit), so the resumed steps depend on rows read before
// the watermark.
func restartData(t testing.TB, dir string) *site.Site {
	s := genSite(3)
	pts := columns(s)
	write := func(name string, from, to int, mtime time.Time) {
		var sb strings.Builder
		sb.WriteString("timestamp")
		for _, p := range pts {
			sb.WriteString("," + p.Column)
		}
		sb.WriteString("\n")
		for r := from; r < to; r++ {
			sb.WriteString(start.Add(time.Duration(r) * time.Minute).Format(time.RFC3339))
			for k, p := range pts {
				sb.WriteByte(',')
				switch {
				case k%3 == 0 && (r+k)%7 != 0: // logged every 7 min
				case k == 5 && r >= 410 && r < 445: // a hole longer than MaxGap
				default:
					sb.WriteString(strconv.FormatFloat(rawValue(p, k, r), 'f', -1, 64))
				}
			}
			sb.WriteString("\n")
		}
		path := filepath.Join(dir, name)
		writeFile(t, path, sb.String())
		if err := os.Chtimes(path, mtime, mtime); err != nil {
			t.Fatal(err)
		}
	}
	now := time.Now()
	write("a.csv", 0, 300, now.Add(-2*time.Hour))
	write("b.csv", 300, 600, now.Add(-time.Hour))
	return s
}

// stepLine is one emitted step, exactly (float bits, flags).
func stepLine(ss []collector.Sample) string {
	var sb strings.Builder
	sb.WriteString(strconv.FormatInt(ss[0].At.UnixNano(), 10))
	for _, x := range ss {
		for _, v := range []float64{x.AirflowM3s, x.DischargeC, x.SupplyC, x.ValveFrac, x.HotWaterC, x.ZoneC, x.OutdoorC} {
			fmt.Fprintf(&sb, " %x", math.Float64bits(v))
		}
		fmt.Fprintf(&sb, " %t%t %x", x.PlantOn, x.FanOn, x.Flags)
	}
	return sb.String()
}

func lineAt(l string) int64 {
	ns, _ := strconv.ParseInt(l[:strings.IndexByte(l, ' ')], 10, 64)
	return ns
}

// pipeline runs source → assembler → consumer once. consume handles a
// step and returns false to stop the run there (a crash: nothing after
// it is accepted). It returns nil when the input was read to its end.
//
// chunk > 0 reads with the parallel reader (two workers) in chunks of
// that many bytes; 0 with the sequential reader.
func pipeline(t testing.TB, dir string, s *site.Site, ck Checkpoints, every time.Duration, chunk int,
	consume func(line string, at time.Time) bool) (*collector.Progress, error) {
	prog, err := collector.OpenProgress(ck, "assembler", every)
	if err != nil {
		t.Fatal(err)
	}
	src, err := New(Config{Name: srcName, Site: s, File: site.TrendfileConfig{Path: dir}, Checkpoints: ck,
		Progress: prog, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	src.fmt.batchReading = 40 // a few rows per batch,
	src.markEvery = 1         // a resume mark after each
	src.fmt.workers, src.fmt.chunkBytes = 1, chunk
	if chunk > 0 {
		src.fmt.workers = 2
	}
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{Progress: prog, Logger: quietLog()})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	out := make(chan []collector.Sample)
	errc := make(chan error, 1)
	go func() { errc <- asm.Run(ctx, []collector.Source{src}, out); close(out) }()
	for ss := range out {
		if !consume(stepLine(ss), ss[0].At) {
			cancel()
			for range out {
			}
			<-errc
			return prog, context.Canceled
		}
		if err := prog.Accept(ss[0].At); err != nil {
			t.Fatal(err)
		}
	}
	if err := <-errc; err != nil {
		return prog, err
	}
	return prog, prog.Commit()
}

// cleanRun is the uninterrupted run's steps.
func cleanRun(t testing.TB, dir string, s *site.Site) []string {
	var lines []string
	if _, err := pipeline(t, dir, s, &MemCheckpoints{}, time.Hour, 0, func(l string, _ time.Time) bool {
		lines = append(lines, l)
		return true
	}); err != nil {
		t.Fatal(err)
	}
	return lines
}

// keepBefore drops the consumer's output at or after the watermark: it was
// handled after the last commit and comes again.
func keepBefore(lines []string, w time.Time) []string {
	if w.IsZero() {
		return lines[:0]
	}
	k := 0
	for _, l := range lines {
		if lineAt(l) < w.UnixNano() {
			lines[k] = l
			k++
		}
	}
	return lines[:k]
}

func sameSteps(t *testing.T, got, want []string) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%d steps, clean run %d", len(got), len(want))
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("step %d differs from the clean run:\n got %.80s…\nwant %.80s…", i, got[i], want[i])
		}
	}
}

// TestRestartAtRandomPointsMatchesCleanRun stops the pipeline after a
// random number of steps, again and again, with commits at random
// moments, and checks the steps handled once each equal the clean run's.
func TestRestartAtRandomPointsMatchesCleanRun(t *testing.T) {
	dir := t.TempDir()
	s := restartData(t, dir)
	want := cleanRun(t, dir, s)
	if len(want) < 500 {
		t.Fatalf("clean run has %d steps", len(want))
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for trial := 0; trial < 4; trial++ {
		ck := &MemCheckpoints{}
		var got []string
		restarts := 0
		for ; restarts < 200; restarts++ {
			stopAfter := rng.IntN(120)
			n := 0
			// Odd trials read in parallel: restarts must not depend on it.
			prog, err := pipeline(t, dir, s, ck, time.Duration(rng.IntN(2))*time.Hour, (trial%2)*(200+rng.IntN(2000)), func(l string, at time.Time) bool {
				if n == stopAfter {
					return false
				}
				n++
				got = append(got, l)
				return true
			})
			if err == nil {
				break
			}
			if !errors.Is(err, context.Canceled) {
				t.Fatal(err)
			}
			if rng.IntN(3) == 0 {
				if err := prog.Commit(); err != nil { // a clean shutdown commits what was accepted
					t.Fatal(err)
				}
			}
			p2, _ := collector.OpenProgress(ck, "assembler", 0)
			got = keepBefore(got, p2.Watermark())
		}
		if restarts < 3 {
			t.Fatalf("trial %d: only %d restarts", trial, restarts)
		}
		sameSteps(t, got, want)
	}
}

// TestRestartKill9MatchesCleanRun runs the pipeline in a child process
// that is killed with SIGKILL at random moments and restarted until it
// finishes; its output file must equal the clean run.
func TestRestartKill9MatchesCleanRun(t *testing.T) {
	if os.Getenv("RW_KILL_CHILD") != "" {
		killChild(t)
		return
	}
	dir := t.TempDir()
	s := restartData(t, dir)
	want := cleanRun(t, dir, s)
	work := t.TempDir()
	rng := rand.New(rand.NewPCG(5, 6))
	kills := 0
	for run := 0; ; run++ {
		if run >= 60 {
			t.Fatalf("not finished after %d runs", run)
		}
		cmd := exec.Command(os.Args[0], "-test.run=^TestRestartKill9MatchesCleanRun$")
		cmd.Env = append(os.Environ(), "RW_KILL_CHILD=1", "RW_DATA="+dir, "RW_WORK="+work)
		var stderr strings.Builder
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		exited := make(chan error, 1)
		go func() { exited <- cmd.Wait() }()
		var err error
		select {
		case err = <-exited:
		case <-time.After(time.Duration(20+rng.IntN(200)+20*run) * time.Millisecond): // longer as runs go: a loaded machine starts slowly
			cmd.Process.Kill() // SIGKILL
			err = <-exited
			kills++
		}
		if err == nil {
			break
		}
		if ee, ok := err.(*exec.ExitError); !ok || ee.ExitCode() != -1 {
			t.Fatalf("child failed: %v\n%s", err, stderr.String())
		}
	}
	b, err := os.ReadFile(filepath.Join(work, "steps.txt"))
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%d kills", kills)
	sameSteps(t, strings.Split(strings.TrimSuffix(string(b), "\n"), "\n"), want)
}

// killChild is the child's side: resume from the checkpoints, drop the
// output after the watermark, append each step (one write each) and run.
func killChild(t *testing.T) {
	dir, work := os.Getenv("RW_DATA"), os.Getenv("RW_WORK")
	ck, err := NewFileCheckpoints(filepath.Join(work, "ck"))
	if err != nil {
		t.Fatal(err)
	}
	p, err := collector.OpenProgress(ck, "assembler", 0)
	if err != nil {
		t.Fatal(err)
	}
	outPath := filepath.Join(work, "steps.txt")
	b, err := os.ReadFile(outPath)
	if err != nil && !errors.Is(err, os.ErrNotExist) {
		t.Fatal(err)
	}
	// Keep the whole lines before the watermark (a prefix: steps come in
	// time order; a line cut by the kill has no newline) and cut the file
	// there with one truncate, which a kill cannot tear.
	keep, w := 0, p.Watermark()
	for keep < len(b) && !w.IsZero() {
		nl := strings.IndexByte(string(b[keep:]), '\n')
		if nl < 0 || lineAt(string(b[keep:keep+nl])) >= w.UnixNano() {
			break
		}
		keep += nl + 1
	}
	f, err := os.OpenFile(outPath, os.O_APPEND|os.O_WRONLY|os.O_CREATE, 0o644)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(int64(keep)); err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s := genSite(3)
	if _, err := pipeline(t, dir, s, ck, 5*time.Millisecond, 1500, func(l string, _ time.Time) bool {
		if _, err := f.WriteString(l + "\n"); err != nil {
			t.Fatal(err)
		}
		time.Sleep(time.Millisecond) // the consumer's work
		return true
	}); err != nil {
		t.Fatal(err)
	}
}
