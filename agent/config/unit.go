package config

import (
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// Spec returns the engine's description of air handler a. The
// configuration must have passed validation (Parse does that).
func (c *Config) Spec(a *AirHandler) *metrics.AirHandler {
	q := func(s string, k psychro.Kind) float64 {
		v, _, _ := psychro.ParseQuantity(s, k, "")
		return v
	}
	u := &metrics.AirHandler{
		ID:         a.ID,
		PressurePa: c.PressurePa,
		LeavingRH:  a.LeavingRHFrac,
		LeavingRHU: a.LeavingRHUFrac,
		MinOutdoor: a.MinOutdoorFrac,
		SpaceGain:  a.SpaceGainKgKg,
		FanRiseK:   a.FanHeatRiseK(),
		FanRatedKW: q(a.Fan.RatedPower, psychro.KindPower),
		Prices: metrics.Prices{
			ElectricityPerKWh:      c.Prices.ElectricityPerKWh,
			FuelPerKWh:             c.Prices.FuelPerKWh,
			ElectricityCO2KgPerKWh: c.Prices.ElectricityCO2KgPerKWh,
			FuelCO2KgPerKWh:        c.Prices.FuelCO2KgPerKWh,
		},
		Accuracy:   c.Accuracy(),
		Thresholds: metrics.DefaultThresholds,
		FlowAt:     metrics.RoleSupplyTemp,
	}
	switch a.Airflow.Location {
	case "entering":
		u.FlowAt = metrics.RoleEnteringTemp
	case "leaving":
		u.FlowAt = metrics.RoleLeavingTemp
	}
	switch a.Cooling.Kind {
	case "dx":
		u.Cooling = metrics.CoolingDX
		u.RatedCOP = psychro.EERToCOP(a.Cooling.RatedEER)
		u.RatedOutdoorC = q(a.Cooling.RatedOutdoor, psychro.KindTemperature)
		u.COPPerK = psychro.EERToCOP(a.Cooling.EERPerKelvin)
		if a.Cooling.RatedCapacity != "" {
			u.RatedCapacityKW = q(a.Cooling.RatedCapacity, psychro.KindPower)
			// applyDefaults put metrics.DefaultDegradationCd where the
			// key is left out; a given 0 is a unit without cycling loss.
			u.DegradationCd = a.Cooling.DegradationCoefficient
		}
	case "chilled_water":
		u.Cooling = metrics.CoolingChilledWater
		u.PlantKWPerKW = a.Cooling.PlantKWPerTon / psychro.TonsToKW(1)
	}
	switch a.Reheat.Kind {
	case "electric":
		u.Reheat = metrics.ReheatElectric
	case "hot_water":
		u.Reheat, u.BoilerEff = metrics.ReheatHotWater, a.Reheat.BoilerEfficiency
	case "recovered":
		u.Reheat = metrics.ReheatRecovered
	default:
		u.Reheat = metrics.ReheatNone
	}
	if a.Airflow.Basis == "actual" {
		u.Basis = metrics.BasisActual
	} else {
		u.Basis = metrics.BasisStandard
	}
	switch a.Fan.Position {
	case "draw_through":
		u.Fan = metrics.FanDrawThrough
	case "blow_through":
		u.Fan = metrics.FanBlowThrough
		if a.Fan.EnteringSensor != "before_fan" {
			u.Fan = metrics.FanBlowThroughMeasured
		}
	default:
		u.Fan = metrics.FanNone
	}
	switch {
	case a.Target.MaxSupplyDewPoint != "":
		u.Target = metrics.Target{Kind: metrics.TargetSupplyDewPoint, DewPointC: q(a.Target.MaxSupplyDewPoint, psychro.KindTemperature)}
	case a.Target.MaxSpaceDewPoint != "":
		u.Target = metrics.Target{Kind: metrics.TargetSpaceDewPoint, DewPointC: q(a.Target.MaxSpaceDewPoint, psychro.KindTemperature)}
	default:
		u.Target = metrics.Target{Kind: metrics.TargetSpaceRH, RH: q(a.Target.MaxSpaceRH, psychro.KindRH)}
		if a.Target.SpaceTemp != "" {
			u.Target.SpaceTempC = q(a.Target.SpaceTemp, psychro.KindTemperature)
		}
	}
	return u
}

// PointMap returns the air handler's points by role.
func (a *AirHandler) PointMap() map[metrics.Role]metrics.PointRef {
	m := make(map[metrics.Role]metrics.PointRef, len(a.Points))
	for r, p := range a.Points {
		m[metrics.Role(r)] = p
	}
	return m
}

// StaleLimits returns the stale limit of each of the air handler's roles.
func (c *Config) StaleLimits(a *AirHandler) map[metrics.Role]time.Duration {
	m := make(map[metrics.Role]time.Duration, len(a.Points))
	for r := range a.Points {
		m[metrics.Role(r)] = c.StaleLimit(metrics.Role(r))
	}
	return m
}

// Accuracy returns the site's sensor accuracies, defaults filled in.
func (c *Config) Accuracy() metrics.Accuracy {
	a := metrics.DefaultAccuracy
	if x, ok := temperatureDelta(c.Sensors.Temperature); ok && x > 0 {
		a.TempK = x
	}
	if x, ok := temperatureDelta(c.Sensors.DewPoint); ok && x > 0 {
		a.DewPointK = x
	}
	share := func(s string, def float64) float64 {
		if x, _, err := psychro.ParseQuantity(s, psychro.KindFraction, ""); err == nil && x > 0 {
			return x
		}
		return def
	}
	a.RH = share(c.Sensors.RH, a.RH)
	a.FlowFrac = share(c.Sensors.Airflow, a.FlowFrac)
	a.PowerFrac = share(c.Sensors.Power, a.PowerFrac)
	return a
}

// RuleParams returns the alert thresholds, defaults filled in.
func (c *Config) RuleParams() metrics.RuleParams {
	p := metrics.DefaultRuleParams
	if c.Alerts.MinAvoidableKWh > 0 {
		p.MinAvoidableKWh = c.Alerts.MinAvoidableKWh
	}
	if c.Alerts.MinEffectiveEER > 0 {
		p.MinEffectiveEER = c.Alerts.MinEffectiveEER
	}
	if x, ok := temperatureDelta(c.Alerts.Overcooling); ok && x > 0 {
		p.OvercoolingK = x
	}
	if x, _, err := psychro.ParseQuantity(c.Alerts.CoilMinLeaving, psychro.KindTemperature, ""); err == nil {
		p.CoilMinLeavingC = x
	}
	if x, _, err := psychro.ParseQuantity(c.Alerts.MinCoverage, psychro.KindFraction, ""); err == nil && x > 0 {
		p.MinCoverage = x
	}
	p.ElectricityPrice = c.Prices.ElectricityPerKWh
	p.IP = c.Site.Units == "ip"
	return p
}

// EnteringAir says in a sentence how the engine gets the state of the air
// entering the coil of air handler a, for "dewline check".
func (a *AirHandler) EnteringAir() string {
	has := func(r metrics.Role) bool { _, ok := a.Points[string(r)]; return ok }
	switch {
	case has(metrics.RoleEnteringRH):
		return "entering air: mixed-air temperature with its own RH (each RH sample taken at the temperature of its instant)"
	case has(metrics.RoleEnteringDewPoint):
		return "entering air: mixed-air temperature with its own dew point"
	}
	share := "the configured minimum outdoor-air share " + a.OutdoorAir.MinFraction
	if has(metrics.RoleOutdoorFlow) {
		share = "outdoor_flow / supply_flow"
	}
	return "entering air: return and outdoor air mixed (W = x W_oa + (1 - x) W_ra); the outdoor-air share x from the mixed, return and outdoor temperatures when outdoor and return differ by 3 K or more, else the hour's own share from such steps, else " + share
}

// CoolingFallback is a warning for an air handler whose cooling input is
// metered with nothing to stand in for the meter (no rated_eer for DX, no
// plant_kw_per_ton for chilled water): an hour the meter reads nothing
// while the coil cools has no cooling input, so no cost and no EER. Empty
// when the unit has a fallback or no meter.
func (a *AirHandler) CoolingFallback() string {
	if _, metered := a.Points[string(metrics.RoleCoolingPower)]; !metered {
		return ""
	}
	switch {
	case a.Cooling.Kind == "dx" && a.Cooling.RatedEER <= 0:
		return "warning: cooling_kw has no fallback: while it reads nothing (a dropout, an out-of-range sample) the coil's cooling input, the hour's cost and its EERs are unknown; add cooling.rated_eer (Btu/Wh, from the nameplate) to model them instead"
	case a.Cooling.Kind == "chilled_water" && a.Cooling.PlantKWPerTon <= 0:
		return "warning: cooling_kw has no fallback: while it reads nothing (a dropout, an out-of-range sample) the coil's cooling input, the hour's cost and its EERs are unknown; add cooling.plant_kw_per_ton to model them instead"
	}
	return ""
}
