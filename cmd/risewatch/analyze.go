package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"time"

	"risewatch/collector"
	"risewatch/collector/trendfile"
	"risewatch/eval"
	"risewatch/fdd"
	"risewatch/rules"
	"risewatch/site"
)

// runAnalyze implements `risewatch analyze`: history from trend files through
// the same assembler, evidence engine and rules as the daemon, then a ranked
// fault table (and JSON/CSV files).
func runAnalyze(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("analyze", flag.ContinueOnError)
	fs.SetOutput(stderr)
	cfgPath := fs.String("config", "", "site configuration file (YAML)")
	rulesPath := fs.String("rules", "", "site rules file: overrides and additions to the built-in rules")
	fromS := fs.String("from", "", "start of the analysis period (RFC 3339, or YYYY-MM-DD[THH:MM] in site time)")
	toS := fs.String("to", "", "end of the analysis period (exclusive)")
	warmup := fs.Duration("warmup", 72*time.Hour, "history before --from fed to the evidence engine only (baseline learning)")
	asJSON := fs.Bool("json", false, "print the ranked faults as JSON instead of a table")
	outDir := fs.String("out", "", "directory to write faults.json, faults.csv and transitions.json")
	only := fs.String("source", "", "comma-separated trend-file source names to read (default: all trend-file sources)")
	progress := fs.String("progress", "auto", "progress bar on stderr: auto (when stderr is a terminal), always, never")
	si := fs.Bool("si", false, "SI units first in the table (default: IP first, SI in brackets)")
	printRules := fs.Bool("print-rules", false, "print the built-in rules YAML and exit")
	truthPath := fs.String("eval", "", "ground-truth CSV (entity,fault,severity,start,end; as `risewatch sim` writes): score the faults found against it")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: risewatch analyze --config FILE --from T --to T [--rules FILE] [--eval GROUNDTRUTH] [--json] [--out DIR] [--si]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *printRules {
		_, err := stdout.Write(rules.BuiltinYAML())
		return err
	}
	if *cfgPath == "" {
		fs.Usage()
		return errors.New("--config is required")
	}
	s, err := site.Load(*cfgPath)
	if err != nil {
		return err
	}
	loc := s.Location
	if loc == nil {
		loc = time.UTC
	}
	from, err := parseWhen(*fromS, loc)
	if err != nil {
		return fmt.Errorf("--from: %w", err)
	}
	to, err := parseWhen(*toS, loc)
	if err != nil {
		return fmt.Errorf("--to: %w", err)
	}
	if !to.After(from) {
		return fmt.Errorf("--to %s is not after --from %s", to.Format(time.RFC3339), from.Format(time.RFC3339))
	}
	var files []*rules.File
	if *rulesPath != "" {
		f, err := rules.LoadFile(*rulesPath)
		if err != nil {
			return err
		}
		files = append(files, f)
	}
	rs, err := rules.Build(files...)
	if err != nil {
		return err
	}
	var scorer *eval.Scorer
	if *truthPath != "" {
		truths, err := eval.ReadGroundTruth(*truthPath)
		if err != nil {
			return err
		}
		scorer = eval.NewScorer(s, eval.Within(truths, from, to), collector.ResampleConfig{}.WithDefaults().Interval)
	}
	log := slog.New(slog.NewTextHandler(stderr, &slog.HandlerOptions{Level: slog.LevelWarn}))
	sources, err := analyzeSources(s, *only, log)
	if err != nil {
		return err
	}
	show, err := wantProgress(*progress, stderr)
	if err != nil {
		return err
	}
	res, err := analyzeRun(ctx, s, rs, sources, from.Add(-*warmup), from, to, log, progressBar(show, stderr, from, to), scorer)
	if err != nil {
		return err
	}
	rows := rules.Rank(res.transitions, res.open)
	var score *eval.Result
	if scorer != nil {
		r := scorer.Result()
		score = &r
	}
	if *outDir != "" {
		if err := writeAnalyzeFiles(*outDir, rows, res.transitions, score); err != nil {
			return err
		}
	}
	if *asJSON {
		if score == nil {
			return rules.WriteJSON(stdout, rows)
		}
		// With --eval the output is one object: the ranked faults and
		// their score against the ground truth.
		var b strings.Builder
		if err := rules.WriteJSON(&b, rows); err != nil {
			return err
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(struct {
			Faults     json.RawMessage `json:"faults"`
			Evaluation *eval.Result    `json:"evaluation"`
		}{json.RawMessage(b.String()), score})
	}
	fmt.Fprintf(stdout, "%s: %d terminals, %s to %s, %d steps analysed, %d faults\n\n", s.Name, len(s.Terminals),
		from.In(loc).Format("2006-01-02 15:04"), to.In(loc).Format("2006-01-02 15:04"), res.steps, len(rows))
	if err := rules.WriteTable(stdout, rows, loc, !*si); err != nil {
		return err
	}
	if score != nil {
		fmt.Fprintf(stdout, "\nAgainst the ground truth in %s:\n\n", *truthPath)
		return score.WriteTable(stdout)
	}
	return nil
}

type analyzeResult struct {
	transitions []rules.Transition
	open        []rules.Transition
	steps       int
}

// analyzeRun feeds samples from start through the engine; from `from` on the
// evidence also goes through the rules (and the scorer, when not nil).
// Samples at or after `to` are drained and ignored.
func analyzeRun(ctx context.Context, s *site.Site, rs *rules.Ruleset, sources []collector.Source, start, from, to time.Time,
	log *slog.Logger, tick func(time.Time), scorer *eval.Scorer) (*analyzeResult, error) {
	eng, err := fdd.NewEngine(s, fdd.Config{})
	if err != nil {
		return nil, err
	}
	for i, e := range eng.TerminalErrors() {
		if e != nil {
			log.Warn("terminal has no coil model; only model-free rules apply", "terminal", s.Terminals[i].ID, "err", e)
		}
	}
	ev, err := rules.NewEvaluator(s, rs)
	if err != nil {
		return nil, err
	}
	asm, err := collector.NewAssembler(s, collector.AssembleConfig{Logger: log})
	if err != nil {
		return nil, err
	}
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	ch := make(chan []collector.Sample, 8)
	errc := make(chan error, 1)
	go func() { errc <- asm.Run(ctx, sources, ch); close(ch) }()
	res := &analyzeResult{}
	var evid []fdd.Evidence
	for batch := range ch {
		if len(batch) == 0 {
			continue
		}
		at := batch[0].At
		if at.Before(start) || !at.Before(to) {
			continue
		}
		evid = eng.StepView(batch)
		if at.Before(from) {
			continue
		}
		n := len(res.transitions)
		res.transitions = ev.Step(evid, eng.Loops(), res.transitions)
		if scorer != nil {
			scorer.Observe(at, evid, eng.Loops(), res.transitions[n:])
		}
		res.steps++
		tick(at)
	}
	if err := <-errc; err != nil && !errors.Is(err, context.Canceled) {
		return nil, err
	}
	tick(to)
	res.open = ev.Open()
	return res, nil
}

func analyzeSources(s *site.Site, only string, log *slog.Logger) ([]collector.Source, error) {
	want := map[string]bool{}
	for _, n := range strings.Split(only, ",") {
		if n = strings.TrimSpace(n); n != "" {
			want[n] = true
		}
	}
	var out []collector.Source
	for _, sc := range s.Sources {
		if len(want) > 0 && !want[sc.Name] {
			continue
		}
		if sc.Trendfile == nil {
			log.Warn("analyze reads trend-file sources only; skipping", "source", sc.Name, "kind", sc.Kind)
			continue
		}
		// History: read what is there once, even from a watched drop folder.
		tf := *sc.Trendfile
		tf.Watch = false
		src, err := trendfile.New(trendfile.Config{Name: sc.Name, Site: s, File: tf, Logger: log})
		if err != nil {
			return nil, err
		}
		out = append(out, src)
		delete(want, sc.Name)
	}
	for n := range want {
		return nil, fmt.Errorf("site %s has no source %q", s.Name, n)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("site %s has no trend-file source to analyse", s.Name)
	}
	return out, nil
}

func writeAnalyzeFiles(dir string, rows []rules.FaultRow, trs []rules.Transition, score *eval.Result) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	write := func(name string, fn func(io.Writer) error) error {
		p := filepath.Join(dir, name)
		f, err := os.Create(p)
		if err != nil {
			return err
		}
		if err := fn(f); err != nil {
			f.Close()
			return fmt.Errorf("%s: %w", p, err)
		}
		return f.Close()
	}
	if err := write("faults.json", func(w io.Writer) error { return rules.WriteJSON(w, rows) }); err != nil {
		return err
	}
	if err := write("faults.csv", func(w io.Writer) error { return rules.WriteCSV(w, rows) }); err != nil {
		return err
	}
	if err := write("transitions.json", func(w io.Writer) error { return rules.WriteTransitionsJSON(w, trs) }); err != nil {
		return err
	}
	if score == nil {
		return nil
	}
	if err := write("evaluation.json", func(w io.Writer) error {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(score)
	}); err != nil {
		return err
	}
	return write("evaluation.md", score.WriteTable)
}

// parseWhen reads RFC 3339, or a date / date-time without offset in loc.
func parseWhen(s string, loc *time.Location) (time.Time, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return time.Time{}, errors.New("required")
	}
	if t, err := time.Parse(time.RFC3339, s); err == nil {
		return t, nil
	}
	for _, layout := range []string{"2006-01-02T15:04:05", "2006-01-02T15:04", "2006-01-02 15:04", "2006-01-02"} {
		if t, err := time.ParseInLocation(layout, s, loc); err == nil {
			return t, nil
		}
	}
	return time.Time{}, fmt.Errorf("%q: want RFC 3339 (2025-01-13T08:00:00-06:00) or YYYY-MM-DD[THH:MM] in site time", s)
}

func wantProgress(mode string, w io.Writer) (bool, error) {
	switch mode {
	case "always":
		return true, nil
	case "never":
		return false, nil
	case "auto":
		f, ok := w.(*os.File)
		if !ok {
			return false, nil
		}
		st, err := f.Stat()
		return err == nil && st.Mode()&os.ModeCharDevice != 0, nil
	}
	return false, fmt.Errorf("--progress %q: want auto, always or never", mode)
}

// progressBar returns a tick function drawing a bar of analysed time on w,
// redrawn at most five times a second.
func progressBar(show bool, w io.Writer, from, to time.Time) func(time.Time) {
	if !show {
		return func(time.Time) {}
	}
	var last time.Time
	span := to.Sub(from).Seconds()
	return func(at time.Time) {
		now := time.Now()
		done := at.Equal(to)
		if !done && now.Sub(last) < 200*time.Millisecond {
			return
		}
		last = now
		f := at.Sub(from).Seconds() / span
		f = max(0, min(1, f))
		const width = 40
		n := int(f * width)
		fmt.Fprintf(w, "\r[%s%s] %3.0f%% %s", strings.Repeat("#", n), strings.Repeat(".", width-n), f*100, at.Format("2006-01-02 15:04"))
		if done {
			fmt.Fprintln(w)
		}
	}
}
