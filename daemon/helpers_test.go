package daemon

import (
	"math"
	"time"

	"risewatch/fdd"
)

func evidenceAt(ti int, at time.Time, rise float64) []fdd.Evidence {
	return []fdd.Evidence{{Terminal: ti, At: at, ObservedRiseK: rise, ExpectedRiseK: rise, ValveFrac: 0.5, AirflowM3s: math.NaN()}}
}
