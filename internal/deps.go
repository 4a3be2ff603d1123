//go:build tools

// Package internal pins the chosen dependencies before their first use so
// that parallel work does not race on go.mod. Removed once all are imported.
package internal

import (
	_ "github.com/chromedp/chromedp"
	_ "github.com/go-pdf/fpdf"
	_ "github.com/influxdata/influxdb-client-go/v2"
	_ "github.com/prometheus/client_golang/prometheus"
	_ "github.com/robfig/cron/v3"
	_ "gonum.org/v1/plot"
	_ "gopkg.in/yaml.v3"
	_ "modernc.org/sqlite"
)
