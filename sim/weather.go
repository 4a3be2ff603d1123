package sim

import (
	"math"
	"math/rand/v2"
	"time"
)

// WeatherSpec describes the invented site climate: outdoor temperature is
// an annual cosine, a daily cosine and a first-order autoregressive
// "synoptic" term (passing fronts); solar gain is a clear-sky sine of the
// sun's elevation scaled by an autoregressive cloud cover.
type WeatherSpec struct {
	AnnualMeanC   float64 `yaml:"annual_mean_c"`
	AnnualAmpK    float64 `yaml:"annual_amplitude_k"`
	ColdestDay    int     `yaml:"coldest_day_of_year"`
	DailyAmpK     float64 `yaml:"daily_amplitude_k"`
	WarmestHour   float64 `yaml:"warmest_hour"`
	SynopticSDK   float64 `yaml:"synoptic_sd_k"`
	SynopticDays  float64 `yaml:"synoptic_days"`
	LatitudeDeg   float64 `yaml:"latitude_deg"`
	DesignOutdoor float64 `yaml:"design_outdoor_c"` // heating design dry bulb
}

type weather struct {
	spec       WeatherSpec
	syn, cloud float64
	rng        *rand.Rand
}

func newWeather(spec WeatherSpec, rng *rand.Rand) *weather {
	w := &weather{spec: spec, rng: rng}
	w.syn = spec.SynopticSDK * rng.NormFloat64()
	w.cloud = rng.Float64()
	return w
}

// step returns outdoor dry bulb (°C) and horizontal solar irradiance (W/m²)
// at local time t, advancing the random terms by dt seconds.
func (w *weather) step(t time.Time, dt float64) (oatC, solarWm2 float64) {
	s := w.spec
	tau := math.Max(s.SynopticDays, 0.1) * 86400
	a := math.Exp(-dt / tau)
	w.syn = a*w.syn + s.SynopticSDK*math.Sqrt(1-a*a)*w.rng.NormFloat64()
	ac := math.Exp(-dt / (8 * 3600))
	w.cloud = clamp01(ac*w.cloud + 0.35*math.Sqrt(1-ac*ac)*w.rng.NormFloat64() + (1-ac)*0.5)

	doy := float64(t.YearDay()) + (float64(t.Hour())+float64(t.Minute())/60)/24
	hour := float64(t.Hour()) + float64(t.Minute())/60 + float64(t.Second())/3600
	oatC = s.AnnualMeanC - s.AnnualAmpK*math.Cos(2*math.Pi*(doy-float64(s.ColdestDay))/365.25) +
		s.DailyAmpK*math.Cos(2*math.Pi*(hour-s.WarmestHour)/24) + w.syn - 1.5*(w.cloud-0.5)

	// Solar declination (Cooper 1969) and elevation at local solar time.
	decl := 23.45 * math.Pi / 180 * math.Sin(2*math.Pi*(284+doy)/365)
	lat := s.LatitudeDeg * math.Pi / 180
	ha := (hour - 12) * 15 * math.Pi / 180
	sinAlt := math.Sin(lat)*math.Sin(decl) + math.Cos(lat)*math.Cos(decl)*math.Cos(ha)
	if sinAlt > 0 {
		// Clear-sky global horizontal ≈ 1000·sin(alt)^1.15 (common practice),
		// reduced by cloud cover as 1 − 0.75·c³ (Kasten & Czeplak 1980).
		solarWm2 = 1000 * math.Pow(sinAlt, 1.15) * (1 - 0.75*w.cloud*w.cloud*w.cloud)
	}
	return oatC, solarWm2
}
