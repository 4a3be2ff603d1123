package metrics

import (
	"bufio"
	"bytes"
	"cmp"
	"compress/gzip"
	"io"
	"math"
	"mime"
	"net/http"
	"sort"
	"strconv"
	"strings"
	"sync"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"
	"github.com/prometheus/common/expfmt"

	"risewatch/fdd"
)

// Streaming /metrics. The per-terminal families (the twelve terminal
// gauges and risewatch_fault_active, about 20 series per terminal) are
// written as exposition text straight from the flat per-terminal arrays:
// a scrape copies the arrays (112 octets per terminal) and allocates
// nothing per series, where the registry's Gather builds a dto.Metric with
// its label pairs, a hash and a sort entry for every series (about 30 MB of
// garbage per scrape at 5,000 terminals). Everything else is gathered from
// a second registry (m.small) and encoded by expfmt in between, in name
// order, so the text is byte for byte what promhttp writes for the full
// registry (TestStreamMatchesGather). Formats other than the text format
// 0.0.4 and OpenMetrics 1.0 (protobuf, OpenMetrics 2.0), a name[] filter
// or a compression other than gzip go to promhttp over the full registry.

// bulkFamily is one streamed family: its name, HELP text and a writer of
// its sample lines.
type bulkFamily struct {
	name, help string
	lines      func(w *bufio.Writer, snap *scrapeSnap, om bool)
}

// scrapeSnap is one scrape's copy of the per-terminal arrays.
type scrapeSnap struct {
	vals []termVals
	term []entityFaults
	loop []entityFaults
	ahu  []entityFaults
	num  []byte // number formatting buffer
	gzw  *gzip.Writer
	bufw *bufio.Writer
}

// streamer holds what a streamed scrape needs that does not change: the
// series order the registry would sort them in and the pooled buffers.
type streamer struct {
	m        *Metrics
	fallback http.Handler
	errs     *prometheus.CounterVec
	families []bulkFamily // sorted by name
	names    [nTermGauges]string
	// order is the terminal indices sorted by their label values (ahu,
	// loop, site, terminal), the order of a gathered family.
	order []int32
	// faultOrder is every fault entity (terminals, loops, AHUs) sorted by
	// (ahu, loop, terminal); faultGroups splits it into runs of one ahu
	// value (kind sorts between ahu and loop).
	faultOrder  []faultEntity
	faultGroups []int // start index of each run, plus len(faultOrder)
	kindOrder   []fdd.Kind
	pool        sync.Pool // *scrapeSnap
}

type faultEntity struct {
	kind             byte // 't', 'l', 'a'
	idx              int32
	ahu, loop, ident string
}

func (m *Metrics) newStreamer() *streamer {
	s := m.site
	st := &streamer{m: m}
	// promhttp's own error counter, on both registries: promhttp finds it
	// registered and counts into it; the streamer counts its encoding errors.
	st.errs = prometheus.NewCounterVec(prometheus.CounterOpts{Name: "promhttp_metric_handler_errors_total",
		Help: "Total number of internal errors encountered by the promhttp metric handler."}, []string{"cause"})
	st.errs.WithLabelValues("gathering")
	st.errs.WithLabelValues("encoding")
	m.both().MustRegister(st.errs)
	st.fallback = promhttp.HandlerFor(m.reg, promhttp.HandlerOpts{
		Registry:          m.small,
		EnableOpenMetrics: true,
		ErrorHandling:     promhttp.ContinueOnError,
	})
	st.order = make([]int32, len(s.Terminals))
	for i := range st.order {
		st.order[i] = int32(i)
	}
	sort.SliceStable(st.order, func(a, b int) bool {
		x, y := &s.Terminals[st.order[a]], &s.Terminals[st.order[b]]
		return placeLess(x.AHU, x.Loop, x.ID, y.AHU, y.Loop, y.ID)
	})
	for i := range s.Terminals {
		t := &s.Terminals[i]
		st.faultOrder = append(st.faultOrder, faultEntity{kind: 't', idx: int32(i), ahu: t.AHU, loop: t.Loop, ident: t.ID})
	}
	for i := range s.Loops {
		st.faultOrder = append(st.faultOrder, faultEntity{kind: 'l', idx: int32(i), loop: s.Loops[i].ID})
	}
	for i := range s.AHUs {
		st.faultOrder = append(st.faultOrder, faultEntity{kind: 'a', idx: int32(i), ahu: s.AHUs[i].ID})
	}
	sort.SliceStable(st.faultOrder, func(a, b int) bool {
		x, y := &st.faultOrder[a], &st.faultOrder[b]
		return placeLess(x.ahu, x.loop, x.ident, y.ahu, y.loop, y.ident)
	})
	for i := range st.faultOrder {
		if i == 0 || st.faultOrder[i].ahu != st.faultOrder[i-1].ahu {
			st.faultGroups = append(st.faultGroups, i)
		}
	}
	st.faultGroups = append(st.faultGroups, len(st.faultOrder))
	for k := fdd.Kind(1); k < 64; k++ {
		if k.String() != "unknown" {
			st.kindOrder = append(st.kindOrder, k)
		}
	}
	sort.SliceStable(st.kindOrder, func(a, b int) bool { return st.kindOrder[a].String() < st.kindOrder[b].String() })

	for g, d := range terminalGaugeDefs {
		st.names[g] = prometheus.BuildFQName(namespace, "terminal", d.name)
		st.families = append(st.families, bulkFamily{name: st.names[g], help: d.help,
			lines: func(w *bufio.Writer, snap *scrapeSnap, om bool) { st.terminalLines(w, snap, g, om) }})
	}
	st.families = append(st.families, bulkFamily{name: prometheus.BuildFQName(namespace, "fault", "active"), help: faultActiveHelp,
		lines: st.faultLines})
	sort.Slice(st.families, func(a, b int) bool { return st.families[a].name < st.families[b].name })
	return st
}

// ServeHTTP serves /metrics.
func (st *streamer) ServeHTTP(rsp http.ResponseWriter, req *http.Request) {
	format := expfmt.NegotiateAccept(req.Header, expfmt.DefaultOpenMetricsAcceptedFormats()...)
	om, ok := streamable(format)
	gz, encOK := acceptsGzip(req.Header.Get("Accept-Encoding"))
	if !ok || !encOK || len(req.URL.Query()["name[]"]) > 0 {
		st.fallback.ServeHTTP(rsp, req)
		return
	}
	mfs, err := st.m.small.Gather()
	if err != nil {
		st.errs.WithLabelValues("gathering").Inc()
	}
	if err != nil && len(mfs) == 0 {
		http.Error(rsp, "An error has occurred while serving metrics:\n\n"+err.Error(), http.StatusInternalServerError)
		return
	}
	snap := st.snapshot()
	defer st.pool.Put(snap)
	h := rsp.Header()
	h.Add("Vary", "Accept")
	h.Add("Vary", "Accept-Encoding")
	h.Set("Content-Type", string(format))
	var out io.Writer = rsp
	if gz {
		h.Set("Content-Encoding", "gzip")
		if snap.gzw == nil {
			snap.gzw = gzip.NewWriter(rsp)
		} else {
			snap.gzw.Reset(rsp)
		}
		out = snap.gzw
	}
	if snap.bufw == nil {
		snap.bufw = bufio.NewWriterSize(out, 32<<10)
	} else {
		snap.bufw.Reset(out)
	}
	w := snap.bufw
	enc := expfmt.NewEncoder(w, format)
	next := 0
	for _, mf := range mfs {
		for next < len(st.families) && st.families[next].name < mf.GetName() {
			st.writeFamily(w, snap, &st.families[next], om)
			next++
		}
		if err := enc.Encode(mf); err != nil {
			st.errs.WithLabelValues("encoding").Inc()
			return // the client went away; nothing more to say
		}
	}
	for ; next < len(st.families); next++ {
		st.writeFamily(w, snap, &st.families[next], om)
	}
	if c, ok := enc.(expfmt.Closer); ok {
		_ = c.Close()
	}
	_ = w.Flush()
	w.Reset(nil) // drop the reference to the response
	if gz {
		_ = snap.gzw.Close()
		snap.gzw.Reset(io.Discard)
	}
}

// streamable reports whether format is one the streamer writes (text
// 0.0.4 or OpenMetrics 1.0) and whether it is OpenMetrics.
func streamable(format expfmt.Format) (om, ok bool) {
	switch format.FormatType() {
	case expfmt.TypeTextPlain:
		return false, true
	case expfmt.TypeOpenMetrics:
		_, params, err := mime.ParseMediaType(string(format))
		if err != nil || params["version"] == expfmt.OpenMetricsVersion_2_0_0 {
			return true, false
		}
		return true, true
	}
	return false, false
}

// acceptsGzip reads Accept-Encoding: gzip when offered (q > 0), identity
// otherwise; ok is false when the client prefers an encoding this writer
// does not make (promhttp then decides).
func acceptsGzip(header string) (gz, ok bool) {
	if header == "" {
		return false, true
	}
	for _, part := range strings.Split(header, ",") {
		name, params, _ := strings.Cut(strings.TrimSpace(part), ";")
		name = strings.ToLower(strings.TrimSpace(name))
		if q, ok := strings.CutPrefix(strings.ReplaceAll(params, " ", ""), "q="); ok {
			if v, err := strconv.ParseFloat(q, 64); err == nil && v == 0 {
				continue
			}
		}
		switch name {
		case "gzip", "*":
			return true, true
		case "zstd":
			return false, false
		}
	}
	return false, true
}

// snapshot copies the per-terminal arrays (a consistent step for every
// series of a terminal) into a pooled scrape buffer.
func (st *streamer) snapshot() *scrapeSnap {
	snap, _ := st.pool.Get().(*scrapeSnap)
	if snap == nil {
		snap = &scrapeSnap{num: make([]byte, 0, 32)}
	}
	tc, fc := st.m.term, st.m.faults
	tc.mu.RLock()
	snap.vals = append(snap.vals[:0], tc.vals...)
	tc.mu.RUnlock()
	fc.mu.RLock()
	snap.term = append(snap.term[:0], fc.term...)
	snap.loop = append(snap.loop[:0], fc.loop...)
	snap.ahu = append(snap.ahu[:0], fc.ahu...)
	fc.mu.RUnlock()
	return snap
}

func (st *streamer) writeFamily(w *bufio.Writer, snap *scrapeSnap, f *bulkFamily, om bool) {
	if f.name == faultActiveName && !st.anyFault(snap) {
		return // a family with no series is not written (as the registry does)
	}
	if f.name != faultActiveName && len(snap.vals) == 0 {
		return
	}
	w.WriteString("# HELP ")
	w.WriteString(f.name)
	w.WriteByte(' ')
	writeEscaped(w, f.help, om)
	w.WriteString("\n# TYPE ")
	w.WriteString(f.name)
	w.WriteString(" gauge\n")
	f.lines(w, snap, om)
}

func (st *streamer) anyFault(snap *scrapeSnap) bool {
	for _, l := range [][]entityFaults{snap.term, snap.loop, snap.ahu} {
		for _, e := range l {
			if e.shown != 0 {
				return true
			}
		}
	}
	return false
}

// terminalLines writes gauge g of every terminal in label order.
func (st *streamer) terminalLines(w *bufio.Writer, snap *scrapeSnap, g int, om bool) {
	s := st.m.site
	name := st.names[g]
	for _, ti := range st.order {
		t := &s.Terminals[ti]
		w.WriteString(name)
		writeLabels(w, t.AHU, "", t.Loop, s.Name, t.ID)
		w.WriteByte(' ')
		st.writeValue(w, snap, snap.vals[ti][g], om)
		w.WriteByte('\n')
	}
}

// faultLines writes risewatch_fault_active in label order: by ahu, then
// kind, then loop and terminal.
func (st *streamer) faultLines(w *bufio.Writer, snap *scrapeSnap, om bool) {
	s := st.m.site
	for gi := 0; gi+1 < len(st.faultGroups); gi++ {
		run := st.faultOrder[st.faultGroups[gi]:st.faultGroups[gi+1]]
		for _, k := range st.kindOrder {
			bit := kindMask(1) << k
			kind := k.String()
			for i := range run {
				e := &run[i]
				var ef entityFaults
				switch e.kind {
				case 't':
					ef = snap.term[e.idx]
				case 'l':
					ef = snap.loop[e.idx]
				default:
					ef = snap.ahu[e.idx]
				}
				if ef.shown&bit == 0 {
					continue
				}
				w.WriteString(faultActiveName)
				writeLabels(w, e.ahu, kind, e.loop, s.Name, e.ident)
				w.WriteByte(' ')
				v := 0.0
				if ef.active&bit != 0 {
					v = 1
				}
				st.writeValue(w, snap, v, om)
				w.WriteByte('\n')
			}
		}
	}
}

// writeLabels writes {ahu="..",kind="..",loop="..",site="..",terminal=".."}
// (kind only when not empty), label values escaped.
func writeLabels(w *bufio.Writer, ahu, kind, loop, site, terminal string) {
	w.WriteString(`{ahu="`)
	writeEscaped(w, ahu, true)
	if kind != "" {
		w.WriteString(`",kind="`)
		writeEscaped(w, kind, true)
	}
	w.WriteString(`",loop="`)
	writeEscaped(w, loop, true)
	w.WriteString(`",site="`)
	writeEscaped(w, site, true)
	w.WriteString(`",terminal="`)
	writeEscaped(w, terminal, true)
	w.WriteString(`"}`)
}

// writeEscaped escapes backslash and newline, and double quotes when quote
// is set (label values; HELP text in OpenMetrics), as expfmt does.
func writeEscaped(w *bufio.Writer, v string, quote bool) {
	if !strings.ContainsAny(v, "\\\n\"") {
		w.WriteString(v)
		return
	}
	for i := 0; i < len(v); i++ {
		switch c := v[i]; {
		case c == '\\':
			w.WriteString(`\\`)
		case c == '\n':
			w.WriteString(`\n`)
		case c == '"' && quote:
			w.WriteString(`\"`)
		default:
			w.WriteByte(c)
		}
	}
}

// writeValue formats a sample value as expfmt does: shortest 'g' form,
// NaN, +Inf, -Inf; OpenMetrics writes integral values with ".0".
func (st *streamer) writeValue(w *bufio.Writer, snap *scrapeSnap, f float64, om bool) {
	switch {
	case math.IsNaN(f):
		w.WriteString("NaN")
	case math.IsInf(f, 1):
		w.WriteString("+Inf")
	case math.IsInf(f, -1):
		w.WriteString("-Inf")
	default:
		if f == 0 {
			f = 0 // -0 is written as 0
		}
		b := strconv.AppendFloat(snap.num[:0], f, 'g', -1, 64)
		if om && !bytes.ContainsAny(b, "e.") {
			b = append(b, '.', '0')
		}
		w.Write(b)
		snap.num = b[:0]
	}
}

// placeLess orders series by AHU, then loop, then entity ID (the order the
// registry's text output had).
func placeLess(ahu1, loop1, id1, ahu2, loop2, id2 string) bool {
	return cmp.Or(cmp.Compare(ahu1, ahu2), cmp.Compare(loop1, loop2), cmp.Compare(id1, id2)) < 0
}
