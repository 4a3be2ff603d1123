// Package assess rates every terminal's existing hot-water reheat coil at a
// lower candidate supply temperature (low-temperature hot-water readiness):
// will the coil still carry the zone's heating load, with the water flow its
// valve and branch can deliver, and if not, which change would.
//
// Physics is package coilmodel's (the detector's model), never a second coil
// model: capacity is coilmodel's rating at the terminal's heating airflow,
// the design entering-air temperature and the full-open installed water flow
// (coilmodel.InstalledFlowM3s: valve and coil in series across the branch
// differential pressure). The flow a coil would need to meet its load is
// found by inverting capacity on water flow with a bracketed root finder;
// the minimum supply temperature by bisection on supply temperature.
//
// Loads come from the site file (Terminal.DesignLoadW) and/or from history
// (see History): hourly mean heat delivered, Q = ṁ·cp·(DAT − EAT) with
// ṁ = ρ_std·V (the box reports standard airflow), EAT = AHU supply air +
// duct gain and cp of moist air (ASHRAE Handbook—Fundamentals ch. 1), over
// steady occupied hours (the first hour of occupancy, the tail of morning
// warm-up, excluded). Each day's largest such hour is the day's sustained
// peak; a least-squares line of the daily peaks against that hour's outdoor
// temperature (coldest 75 % of days) is evaluated at the site's heating
// design temperature, with its 95 % prediction interval (widened for
// serial correlation) combined with the sensor uncertainty. Without an
// outdoor-air point or a design temperature the estimate is the largest
// sustained hour observed, not extrapolated, and says so in its Note.
//
// The package is pure apart from History's optional reading through the
// collector: no clocks, no logs, no writes to the building automation
// system; it is advisory.
package assess
