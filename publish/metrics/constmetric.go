package metrics

import (
	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"
)

// Label pairs are built once per scrape per entity and shared by every
// series of that entity (the encoders only read them), so a scrape of N
// terminals allocates O(N) label pairs rather than one set per series.

// labelPair returns a label pair (name and value not copied).
func labelPair(name, value *string) *dto.LabelPair { return &dto.LabelPair{Name: name, Value: value} }

// Label names, shared by every pair.
var (
	lnAHU, lnKind, lnLoop, lnSite, lnTerminal = ptr("ahu"), ptr("kind"), ptr("loop"), ptr("site"), ptr("terminal")
)

func ptr(s string) *string { return &s }

// entityLabels are the sorted pairs ahu, loop, site, terminal of one entity.
func entityLabels(site, terminal, ahu, loop string) []*dto.LabelPair {
	return []*dto.LabelPair{labelPair(lnAHU, &ahu), labelPair(lnLoop, &loop), labelPair(lnSite, &site), labelPair(lnTerminal, &terminal)}
}

// withKind inserts the kind pair in name order (ahu, kind, loop, ...).
func withKind(ls []*dto.LabelPair, kind *dto.LabelPair) []*dto.LabelPair {
	return []*dto.LabelPair{ls[0], kind, ls[1], ls[2], ls[3]}
}

// gauge is a constant gauge sample with precomputed, sorted label pairs.
type gauge struct {
	desc   *prometheus.Desc
	labels []*dto.LabelPair
	value  float64
}

func (g *gauge) Desc() *prometheus.Desc { return g.desc }

func (g *gauge) Write(out *dto.Metric) error {
	v := g.value
	out.Label = g.labels
	out.Gauge = &dto.Gauge{Value: &v}
	return nil
}
