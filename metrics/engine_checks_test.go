package metrics_test

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

func constant(v float64) func(int) float64 { return func(int) float64 { return v } }

// TestCompute_RulesOfThumb compares the engine's hourly coil figures for a
// steady hour with the trade's standard-air factors (common practice, no
// source): 1.08 x CFM x dT, 4840 x CFM x dW and 4.5 x CFM x dh, within 3 %.
// The airflow is standard air at the rules' 0.075 lb/ft³.
func TestCompute_RulesOfThumb(t *testing.T) {
	const cfm = 8000.0
	u := testAirHandler()
	u.Reheat, u.Fan = metrics.ReheatNone, metrics.FanNone
	// Standard-air basis at 1.204 kg/m³; feed the flow that gives the
	// rules' mass flow of 0.075 lb/ft³ x CFM.
	q := psychro.LbToKg(0.075) / psychro.M3PerFt3 * psychro.CFMToM3s(cfm) / psychro.StandardAirDensity
	tIn, rhIn, tLv := psychro.FToC(78), 0.55, psychro.FToC(54)
	// The leaving state is measured (95 % RH), so the check is of the
	// factors, not of a coil model.
	h := newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(tIn), metrics.RoleEnteringRH: constant(rhIn),
		metrics.RoleLeavingTemp: constant(tLv), metrics.RoleLeavingRH: constant(0.95), metrics.RoleSupplyTemp: constant(tLv), metrics.RoleSupplyFlow: constant(q),
	})
	rec := metrics.Compute(u, h)
	in, err := psychro.NewStateRH(tIn, rhIn, u.PressurePa)
	require.NoError(t, err)
	wOut, err := psychro.HumRatioFromRH(tLv, 0.95, u.PressurePa)
	require.NoError(t, err)
	dW := in.HumRatio - wOut
	dh := in.IP().EnthalpyBtuPerLb - psychro.EnthalpyIP(54, wOut)
	btu := func(kwh float64) float64 { return psychro.KWToBtuh(kwh) } // one hour: kWh -> Btu/h
	assert.InEpsilon(t, 1.08*cfm*24, btu(rec.CoilSensibleKWh), 0.03, "sensible")
	assert.InEpsilon(t, 4840*cfm*dW, btu(rec.CoilLatentKWh), 0.03, "latent")
	assert.InEpsilon(t, 4.5*cfm*dh, btu(rec.CoilTotalGrossKWh), 0.03, "total")
	// 1 lb of water per lb of dry air difference: water = m_da x dW.
	assert.InEpsilon(t, psychro.LbToKg(0.075*cfm*60)*dW, rec.WaterRemovedKg, 0.01, "water")
}

// TestCompute_HandbookExample runs the cooling-and-dehumidifying worked
// example of ASHRAE Handbook - Fundamentals ch. 1 through the engine (from
// memory, to be checked against the printed page): 5 m³/s of air at 30 °C /
// 50 % cooled to saturation at 10 °C needs about 197 kW of refrigeration.
// The leaving state is given by a leaving RH sensor reading 100 %, and the
// airflow is actual volume at the entering state.
func TestCompute_HandbookExample(t *testing.T) {
	u := testAirHandler()
	u.Basis, u.FlowAt = metrics.BasisActual, metrics.RoleEnteringTemp
	u.Reheat, u.Fan = metrics.ReheatNone, metrics.FanNone
	h := newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(30), metrics.RoleEnteringRH: constant(0.5),
		metrics.RoleLeavingTemp: constant(10), metrics.RoleLeavingRH: constant(1.0),
		metrics.RoleSupplyTemp: constant(10), metrics.RoleSupplyFlow: constant(5),
	})
	rec := metrics.Compute(u, h)
	assert.InEpsilon(t, 197, rec.CoilTotalKWh, 0.015, "kWh over one hour = kW (memory)")
	assert.InEpsilon(t, 5.70*3600, rec.DryAirKg, 0.01, "dry-air mass flow 5.70 kg/s (memory)")
}

// TestCompute_ReheatSources: the same air-side hour priced three ways.
// Electric reheat is bought 1:1, hot water as fuel through the boiler
// efficiency at the fuel price, recovered heat not at all.
func TestCompute_ReheatSources(t *testing.T) {
	h := newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(24), metrics.RoleEnteringRH: constant(0.55),
		metrics.RoleLeavingTemp: constant(11), metrics.RoleLeavingRH: constant(0.95),
		metrics.RoleSupplyTemp: constant(17.5), metrics.RoleSupplyFlow: constant(3),
	})
	base := testAirHandler()
	base.Prices = metrics.Prices{ElectricityPerKWh: 0.20, FuelPerKWh: 0.05, ElectricityCO2KgPerKWh: 0.5, FuelCO2KgPerKWh: 0.2}
	elec := metrics.Compute(base, h)
	require.Greater(t, elec.ReheatKWh, 10.0)
	// Reheat heat = m cp (17.5 - 0.5 - 11), by hand: 1.204 x 3 kg/s x cp x 6 K.
	w, _ := psychro.HumRatioFromRH(11, 0.95, base.PressurePa)
	assert.InEpsilon(t, 1.204*3*(1.006+1.86*w)*6, elec.ReheatKWh, 1e-9)
	assert.InEpsilon(t, elec.ReheatKWh, elec.ReheatInputKWh, 1e-9)
	assert.InEpsilon(t, elec.CoolingInputKWh+elec.ReheatInputKWh, elec.ElectricityKWh, 1e-9)
	assert.InEpsilon(t, 0.20*elec.ElectricityKWh, elec.Cost, 1e-9)

	hw := *base
	hw.Reheat, hw.BoilerEff = metrics.ReheatHotWater, 0.8
	hot := metrics.Compute(&hw, h)
	assert.InEpsilon(t, elec.ReheatKWh/0.8, hot.FuelKWh, 1e-9)
	assert.InEpsilon(t, hot.CoolingInputKWh, hot.ElectricityKWh, 1e-9, "hot water is not electricity")
	assert.InEpsilon(t, 0.20*hot.ElectricityKWh+0.05*hot.FuelKWh, hot.Cost, 1e-9)
	assert.InEpsilon(t, 0.5*hot.ElectricityKWh+0.2*hot.FuelKWh, hot.CO2Kg, 1e-9)

	rc := *base
	rc.Reheat = metrics.ReheatRecovered
	rec := metrics.Compute(&rc, h)
	assert.Equal(t, 0.0, rec.ReheatInputKWh)
	assert.InEpsilon(t, elec.ReheatKWh, rec.ReheatKWh, 1e-9, "the heat is the same")
	assert.Greater(t, rec.EffectiveEER, elec.EffectiveEER, "recovered heat costs nothing")
	// Effective EER by its definition.
	want := 3.412142 * (elec.CoilTotalKWh - elec.ReheatKWh) / (elec.CoolingInputKWh + elec.ReheatInputKWh)
	assert.InEpsilon(t, want, elec.EffectiveEER, 1e-5)
}

// TestCompute_NeededAndAvoidable exercises the three cases of the needed
// coil temperature T_c = min(t_in, t_sup, T_required).
func TestCompute_NeededAndAvoidable(t *testing.T) {
	u := testAirHandler()
	u.Fan, u.FanRiseK = metrics.FanNone, 0
	// A leaving sensor reads 90 % (the unit assumes 95 %): the required
	// temperature follows from the measured leaving RH (the bypass-factor
	// case is in the synthetic ground truth).
	hour := func(tIn, rh, tLv, tSup float64) metrics.Record {
		return metrics.Compute(u, newHour(day0, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: constant(tIn), metrics.RoleEnteringRH: constant(rh), metrics.RoleLeavingRH: constant(0.90),
			metrics.RoleLeavingTemp: constant(tLv), metrics.RoleSupplyTemp: constant(tSup), metrics.RoleSupplyFlow: constant(2),
		}))
	}
	t.Run("dry entering air: all reheat avoidable", func(t *testing.T) {
		r := hour(22, 0.35, 11, 17) // entering dew point about 5.8 °C, below the 12 °C target
		assert.Equal(t, 0.0, r.HumidityNeedHours)
		assert.InDelta(t, r.ReheatKWh, r.ReheatAvoidKWh, 1e-9)
		assert.Equal(t, 0.0, r.ReheatNeededKWh)
		assert.True(t, math.IsNaN(r.RequiredLeavingC))
		assert.InDelta(t, 6, r.OvercoolingK, 1e-9, "the coil needed only to reach the 17 °C supply")
		assert.InDelta(t, 1.0, r.SHCUnneededH, 1e-9)
	})
	t.Run("humid air, coil colder than needed", func(t *testing.T) {
		r := hour(25, 0.65, 9, 17)
		// The target (12 °C dew point) needs a coil of
		// about 13.6 °C: the dew point of W(12 °C sat) at the measured RH 0.90.
		wReq, _ := psychro.HumRatioFromDewPoint(12, u.PressurePa)
		pw, _ := psychro.VapPressureFromHumRatio(wReq, u.PressurePa)
		tReq, _ := psychro.DewPointFromVapPressure(pw / 0.90)
		assert.InDelta(t, tReq, r.RequiredLeavingC, 1e-9)
		assert.InDelta(t, tReq-9, r.OvercoolingK, 1e-9)
		assert.Greater(t, r.ReheatNeededKWh, 0.0)
		assert.Greater(t, r.ReheatAvoidKWh, 0.0)
		assert.InDelta(t, r.ReheatKWh, r.ReheatNeededKWh+r.ReheatAvoidKWh, 1e-9)
		assert.Greater(t, r.CoolingAvoidKWh, 0.0)
		assert.Equal(t, 0.0, r.SHCUnneededH)
	})
	t.Run("humid air, coil at the required temperature", func(t *testing.T) {
		wReq, _ := psychro.HumRatioFromDewPoint(12, u.PressurePa)
		pw, _ := psychro.VapPressureFromHumRatio(wReq, u.PressurePa)
		tReq, _ := psychro.DewPointFromVapPressure(pw / 0.90)
		r := hour(25, 0.65, tReq, 17)
		assert.InDelta(t, 0, r.ReheatAvoidKWh, 1e-6)
		assert.InDelta(t, 0, r.CoolingAvoidKWh, 1e-6)
		assert.InDelta(t, 0, r.OvercoolingK, 1e-9)
	})
}

// TestCompute_Flags covers the data-quality findings.
func TestCompute_Flags(t *testing.T) {
	u := testAirHandler()
	base := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: func(i int) float64 { return 24 + float64(i%7)/10 },
		metrics.RoleEnteringRH:   func(i int) float64 { return 0.55 + float64(i%5)/100 },
		metrics.RoleLeavingTemp:  func(i int) float64 { return 11 + float64(i%3)/10 },
		metrics.RoleSupplyTemp:   func(i int) float64 { return 17 + float64(i%4)/10 },
		metrics.RoleSupplyFlow:   constant(3),
	}
	with := func(extra map[metrics.Role]func(int) float64) *metrics.Hour {
		m := map[metrics.Role]func(int) float64{}
		for k, v := range base {
			m[k] = v
		}
		for k, v := range extra {
			m[k] = v
		}
		return newHour(day0, m)
	}
	t.Run("clean hour", func(t *testing.T) {
		r := metrics.Compute(u, with(nil))
		assert.Equal(t, []string{metrics.FlagModelledCooling}, r.Flags)
	})
	t.Run("gap", func(t *testing.T) {
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{
			metrics.RoleLeavingTemp: func(i int) float64 {
				if i < 20 {
					return math.NaN()
				}
				return 11
			}}))
		assert.InDelta(t, 40.0/60, r.Coverage, 1e-12)
		assert.Contains(t, r.Flags, metrics.FlagLowCoverage)
	})
	t.Run("stuck RH sensor", func(t *testing.T) {
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleEnteringRH: constant(0.6)}))
		assert.Contains(t, r.Flags, metrics.FlagFlat+"entering_rh")
	})
	t.Run("leaving sensor wetter than entering", func(t *testing.T) {
		// Saturated at 20 °C holds more moisture than 24 °C at 55-59 % RH:
		// a cooling coil cannot have added it.
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleLeavingRH: constant(1.0),
			metrics.RoleLeavingTemp: func(i int) float64 { return 20 + float64(i%3)/10 }}))
		assert.Contains(t, r.Flags, metrics.FlagMoistureAdded)
		assert.Equal(t, 0.0, r.WaterRemovedKg, "a coil 5 K above the entering dew point removes nothing")
	})
	t.Run("wet coil gives water back after the compressor stops", func(t *testing.T) {
		// Coil off (leaving 0.3 K below entering, inside the 0.5 K
		// deadband), leaving sensor saturated: the wet coil re-evaporates.
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleLeavingRH: constant(1.0),
			metrics.RoleLeavingTemp: func(i int) float64 { return 24 + float64(i%7)/10 - 0.3 }}))
		assert.NotContains(t, r.Flags, metrics.FlagMoistureAdded)
		assert.Greater(t, r.WaterReevaporatedKg, 1.0)
		assert.Equal(t, 0.0, r.WaterRemovedKg)
	})
	t.Run("reheat meter disagrees", func(t *testing.T) {
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleReheatPower: constant(80)}))
		assert.Contains(t, r.Flags, metrics.FlagReheatMeter)
		assert.InDelta(t, 80, r.ReheatInputKWh, 1e-9, "the meter is what was bought")
	})
	t.Run("reheat meter trimming within the air side's deadband", func(t *testing.T) {
		// Supply 0.8 K above the coil with the fan's 0.5 K: the air side
		// sees 0.3 K, inside its 0.5 K deadband, so it counts no reheat.
		// A meter reading the heat of that 0.3 K (3 m³/s × 1.204 kg/m³ ×
		// 1.02 kJ/kg·K × 0.3 K ≈ 1.1 kW, standard-air rule of thumb, common
		// practice) agrees with the air as well as the sensors can tell.
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{
			metrics.RoleLeavingTemp: constant(11), metrics.RoleSupplyTemp: constant(11.8),
			metrics.RoleReheatPower: constant(1.1)}))
		assert.NotContains(t, r.Flags, metrics.FlagReheatMeter)
		// Ten times that power cannot hide in the deadband.
		r = metrics.Compute(u, with(map[metrics.Role]func(int) float64{
			metrics.RoleLeavingTemp: constant(11), metrics.RoleSupplyTemp: constant(11.8),
			metrics.RoleReheatPower: constant(11)}))
		assert.Contains(t, r.Flags, metrics.FlagReheatMeter)
	})
	t.Run("metered cooling input far below the air-side load", func(t *testing.T) {
		// About 40 kW of coil load (3 m³/s cooled 13 K with condensation)
		// on 2 kW of compressor: a COP near 20, impossible for a
		// vapour-compression unit.
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleCoolingPower: constant(2)}))
		assert.Contains(t, r.Flags, metrics.FlagCOPImplausible)
		r = metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleCoolingPower: func(int) float64 { return r.CoilTotalKWh / 4 }}))
		assert.NotContains(t, r.Flags, metrics.FlagCOPImplausible, "COP 4 is plausible")
	})
	t.Run("leaving sensor drops out", func(t *testing.T) {
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleLeavingRH: func(i int) float64 {
			if i < 30 {
				return math.NaN()
			}
			return 0.95 + float64(i%3)/100
		}}))
		assert.Contains(t, r.Flags, metrics.FlagLeavingSensorOut)
		assert.Equal(t, 1.0, r.Coverage, "the coil model covers the steps")
	})
	t.Run("supply warmer with no reheat coil", func(t *testing.T) {
		v := *u
		v.Reheat = metrics.ReheatNone
		r := metrics.Compute(&v, with(nil))
		assert.Contains(t, r.Flags, metrics.FlagReheatWithoutCoil)
		assert.Equal(t, 0.0, r.ReheatKWh)
	})
	t.Run("no data", func(t *testing.T) {
		r := metrics.Compute(u, with(map[metrics.Role]func(int) float64{metrics.RoleSupplyFlow: constant(math.NaN())}))
		assert.Equal(t, 0.0, r.Coverage)
		assert.Contains(t, r.Flags, metrics.FlagNoData)
	})
}

// TestCompute_CoolingInput: metered kW wins; the DX model follows the rated
// EER with its outdoor correction; chilled water uses the plant's kW/ton.
func TestCompute_CoolingInput(t *testing.T) {
	vals := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(26), metrics.RoleEnteringRH: constant(0.6),
		metrics.RoleLeavingTemp: constant(12), metrics.RoleSupplyTemp: constant(12.5), metrics.RoleSupplyFlow: constant(3),
	}
	u := testAirHandler()
	model := metrics.Compute(u, newHour(day0, vals))
	// No outdoor temperature: the rated EER of 11.
	assert.InEpsilon(t, model.CoilTotalKWh/psychro.EERToCOP(11), model.CoolingInputKWh, 1e-9)
	assert.InEpsilon(t, 11, model.CoilEER, 1e-9)
	vals[metrics.RoleOutdoorTemp] = constant(40)
	hot := metrics.Compute(u, newHour(day0, vals))
	assert.InEpsilon(t, model.CoilTotalKWh/(psychro.EERToCOP(11)-0.03*5), hot.CoolingInputKWh, 1e-9)
	vals[metrics.RoleCoolingPower] = constant(21)
	metered := metrics.Compute(u, newHour(day0, vals))
	assert.InDelta(t, 21, metered.CoolingInputKWh, 1e-9)
	assert.NotContains(t, metered.Flags, metrics.FlagModelledCooling)
	delete(vals, metrics.RoleCoolingPower)
	cw := *u
	cw.Cooling, cw.PlantKWPerKW = metrics.CoolingChilledWater, 0.9/psychro.TonsToKW(1)
	chw := metrics.Compute(&cw, newHour(day0, vals))
	assert.InEpsilon(t, psychro.KWToTons(chw.CoilTotalKWh)*0.9, chw.CoolingInputKWh, 1e-9)
}

// TestCompute_CoolingInputMissing: a unit whose cooling input is metered
// and which has no rated EER (or plant kW/ton) to fall back on has no
// cooling input while the meter is silent and the coil cools. Everything
// that needs the input (electricity, cost, the EERs) is unknown, never
// 0 or +Inf, and the hour says why; the air side is what it is.
func TestCompute_CoolingInputMissing(t *testing.T) {
	vals := func(kw func(int) float64) *metrics.Hour {
		return newHour(day0, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: constant(26), metrics.RoleEnteringRH: constant(0.6),
			metrics.RoleLeavingTemp: constant(12), metrics.RoleSupplyTemp: constant(16), metrics.RoleSupplyFlow: constant(3),
			metrics.RoleCoolingPower: kw,
		})
	}
	silent := constant(math.NaN())
	firstTwenty := func(i int) float64 {
		if i < 20 {
			return math.NaN()
		}
		return 20
	}
	dx := testAirHandler()
	dx.RatedCOP = 0
	chw := testAirHandler()
	chw.Cooling, chw.PlantKWPerKW = metrics.CoolingChilledWater, 0
	for _, u := range []*metrics.AirHandler{dx, chw} {
		metered := metrics.Compute(u, vals(constant(20)))
		require.InDelta(t, 20, metered.CoolingInputKWh, 1e-9)
		for name, kw := range map[string]func(int) float64{"silent all hour": silent, "silent 20 min": firstTwenty} {
			t.Run(name, func(t *testing.T) {
				r := metrics.Compute(u, vals(kw))
				for field, v := range map[string]float64{
					"cooling_input_kwh": r.CoolingInputKWh, "cooling_avoidable_input_kwh": r.CoolingAvoidKWh,
					"electricity_kwh": r.ElectricityKWh, "cost": r.Cost, "cost_avoidable": r.CostAvoidable,
					"co2_kg": r.CO2Kg, "coil_eer": r.CoilEER, "effective_eer": r.EffectiveEER,
					"effective_eer_cost_basis": r.EffectiveEERCost, "water_per_kwh_l": r.WaterPerKWhL,
				} {
					assert.True(t, math.IsNaN(v), "%s = %v, want unknown", field, v)
				}
				assert.Contains(t, r.Flags, metrics.FlagCoolingMissing)
				assert.NotContains(t, r.Flags, metrics.FlagModelledCooling, "nothing could be modelled")
				assert.Equal(t, metered.CoilTotalKWh, r.CoilTotalKWh, "the air side does not need the meter")
				assert.Equal(t, metered.ReheatInputKWh, r.ReheatInputKWh)
			})
		}
	}
	t.Run("coil off", func(t *testing.T) {
		// No coil load, no cooling input, meter or not.
		r := metrics.Compute(dx, newHour(day0, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: constant(22), metrics.RoleEnteringRH: constant(0.5),
			metrics.RoleLeavingTemp: constant(22), metrics.RoleSupplyTemp: constant(22), metrics.RoleSupplyFlow: constant(3),
			metrics.RoleCoolingPower: silent,
		}))
		assert.Equal(t, 0.0, r.CoolingInputKWh)
		assert.NotContains(t, r.Flags, metrics.FlagCoolingMissing)
	})
}

// TestCompute_UncertaintyMonteCarlo compares the propagated 95 % half-widths
// with a Monte Carlo over the same sensor biases (an independent method):
// each trial draws one bias per sensor for the hour, normal with the
// accuracy as its 95 % half-width, and recomputes the hour. The two must
// agree within 15 %.
func TestCompute_UncertaintyMonteCarlo(t *testing.T) {
	u := testAirHandler()
	r := rand.New(rand.NewPCG(7, 11))
	vals := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: func(i int) float64 { return 25 + math.Sin(float64(i)/9) },
		metrics.RoleEnteringRH:   func(i int) float64 { return 0.62 + 0.03*math.Cos(float64(i)/7) },
		metrics.RoleLeavingTemp:  func(i int) float64 { return 10.5 + 0.3*math.Sin(float64(i)/5) },
		metrics.RoleSupplyTemp:   func(i int) float64 { return 17.5 + 0.2*math.Cos(float64(i)/4) },
		metrics.RoleSupplyFlow:   constant(4),
	}
	h := newHour(day0, vals)
	rec := metrics.Compute(u, h)
	a := u.Accuracy
	const trials = 3000
	var sum, sumSq [4]float64
	for k := 0; k < trials; k++ {
		g := func(half float64) float64 { return r.NormFloat64() * half / 1.96 }
		dTin, dRH, dTlv, dTsup, dQ := g(a.TempK), g(a.RH), g(a.TempK), g(a.TempK), g(a.FlowFrac)
		p := newHour(day0, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: func(i int) float64 { return vals[metrics.RoleEnteringTemp](i) + dTin },
			metrics.RoleEnteringRH:   func(i int) float64 { return math.Min(1, vals[metrics.RoleEnteringRH](i)+dRH) },
			metrics.RoleLeavingTemp:  func(i int) float64 { return vals[metrics.RoleLeavingTemp](i) + dTlv },
			metrics.RoleSupplyTemp:   func(i int) float64 { return vals[metrics.RoleSupplyTemp](i) + dTsup },
			metrics.RoleSupplyFlow:   func(i int) float64 { return 4 * (1 + dQ) },
		})
		x := metrics.Compute(u, p)
		for j, v := range []float64{x.WaterRemovedKg, x.CoilTotalKWh, x.ReheatKWh, x.ReheatAvoidKWh} {
			sum[j] += v
			sumSq[j] += v * v
		}
	}
	names := []string{"water", "coil total", "reheat", "reheat avoidable"}
	prop := []float64{rec.WaterRemovedKgU95, rec.CoilTotalKWhU95, rec.ReheatKWhU95, rec.ReheatAvoidKWhU95}
	for j := range names {
		mean := sum[j] / trials
		mc := 1.96 * math.Sqrt(sumSq[j]/trials-mean*mean)
		t.Logf("%s: propagated ±%.3f, Monte Carlo ±%.3f", names[j], prop[j], mc)
		assert.InEpsilon(t, mc, prop[j], 0.15, names[j])
	}
}

// TestCompute_StepFromAlignment: the engine reads a 5-minute grid as well.
func TestCompute_StepSize(t *testing.T) {
	u := testAirHandler()
	mk := func(step time.Duration) metrics.Record {
		n := int(time.Hour / step)
		h := &metrics.Hour{AHU: "AHU-T", Start: day0, Step: step, Values: map[metrics.Role][]float64{}, Quality: map[metrics.Role]metrics.RoleQuality{}}
		for r, v := range map[metrics.Role]float64{metrics.RoleEnteringTemp: 25, metrics.RoleEnteringRH: 0.6, metrics.RoleLeavingTemp: 11, metrics.RoleSupplyTemp: 17, metrics.RoleSupplyFlow: 3} {
			s := make([]float64, n)
			for i := range s {
				s[i] = v
			}
			h.Values[r] = s
		}
		return metrics.Compute(u, h)
	}
	a, b := mk(time.Minute), mk(5*time.Minute)
	assert.InEpsilon(t, a.CoilTotalKWh, b.CoilTotalKWh, 1e-9)
	assert.InEpsilon(t, a.ReheatKWh, b.ReheatKWh, 1e-9)
}

// TestCompute_DryCoilWithLeavingSensor: a coil leaving at 16 °C with the
// entering dew point near 8.4 °C (22 °C, 40 % RH) is dry: no water can
// condense on a surface above the entering dew point. A leaving RH sensor
// that reads 3 % low (within its accuracy), with noise, must not turn that
// into water (physics; the handbook's coil process, ASHRAE Fundamentals
// ch. 1).
func TestCompute_DryCoilWithLeavingSensor(t *testing.T) {
	u := testAirHandler()
	p := u.PressurePa
	wIn, err := psychro.HumRatioFromRH(22, 0.40, p)
	require.NoError(t, err)
	rhTrue, err := psychro.RHFromHumRatio(16, wIn, p)
	require.NoError(t, err)
	r := rand.New(rand.NewPCG(3, 5))
	noise := make([]float64, 60)
	for i := range noise {
		noise[i] = 0.01 * r.NormFloat64()
	}
	rec := metrics.Compute(u, newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: func(i int) float64 { return 22 + float64(i%5)/20 },
		metrics.RoleEnteringRH:   func(i int) float64 { return 0.40 + float64(i%3)/500 },
		metrics.RoleLeavingTemp:  func(i int) float64 { return 16 + float64(i%4)/20 },
		metrics.RoleLeavingRH:    func(i int) float64 { return rhTrue - 0.03 + noise[i] },
		metrics.RoleSupplyTemp:   constant(17), metrics.RoleSupplyFlow: constant(3),
	}))
	assert.Equal(t, 0.0, rec.WaterRemovedKg, "a dry coil removes no water")
	assert.InDelta(t, rec.CoilSensibleKWh, rec.CoilTotalKWh, 1e-9, "all of a dry coil's load is sensible")
	assert.NotContains(t, rec.Flags, metrics.FlagMoistureAdded)
}

// TestCompute_LeavingRuleContinuous: without a leaving sensor the leaving
// humidity has no step at the entering dew point: water removed changes
// smoothly as the coil leaving temperature crosses it (the bypass-factor
// coil; a rule that jumps to the assumed RH below the dew point would move
// the water by about 5 % of W_in in 0.02 K).
func TestCompute_LeavingRuleContinuous(t *testing.T) {
	u := testAirHandler()
	td, err := psychro.DewPointFromHumRatio(mustW(t, 24, 0.5, u.PressurePa), u.PressurePa)
	require.NoError(t, err)
	water := func(tLv float64) float64 {
		return metrics.Compute(u, newHour(day0, map[metrics.Role]func(int) float64{
			metrics.RoleEnteringTemp: constant(24), metrics.RoleEnteringRH: constant(0.5),
			metrics.RoleLeavingTemp: constant(tLv), metrics.RoleSupplyTemp: constant(17), metrics.RoleSupplyFlow: constant(3),
		})).WaterRemovedKg
	}
	prev := water(td + 2)
	for d := 2.0; d > -2; d -= 0.01 {
		w := water(td + d)
		// On a smooth rule 0.01 K of coil temperature moves the water of 3
		// m³/s (about 13,000 kg of dry air an hour) by at most 13,000 x
		// 0.01 K x 0.8 g/kg per K (the slope of W at saturation near 12 °C)
		// ≈ 0.1 kg.
		assert.Less(t, math.Abs(w-prev), 0.2, "leaving %.2f K from the dew point", d)
		prev = w
	}
	assert.Greater(t, water(td-2), 10.0, "2 K below the dew point the coil is wet")
}

func mustW(t *testing.T, tC, rh, p float64) float64 {
	t.Helper()
	w, err := psychro.HumRatioFromRH(tC, rh, p)
	require.NoError(t, err)
	return w
}

// TestCompute_MixedEnteringAir: no mixed-air humidity sensor; return air at
// 24 °C / 50 % and outdoor air at 32 °C / 60 % mix 30 % outdoor (by dry-air
// mass; adiabatic mixing of ASHRAE Fundamentals ch. 1: W and h mix
// linearly). The entering humidity must be the mix, with the share read
// from the three temperatures, not the configured 15 % minimum; and in
// steps where outdoor and return read within 3 K of each other, the share
// of the hour's other steps.
func TestCompute_MixedEnteringAir(t *testing.T) {
	u := testAirHandler()
	u.MinOutdoor = 0.15
	p := u.PressurePa
	wRa, wOa := mustW(t, 24, 0.5, p), mustW(t, 32, 0.6, p)
	const x = 0.3
	wMix := x*wOa + (1-x)*wRa
	h := func(tC, w float64) float64 { return 1.006*tC + w*(2501+1.86*tC) } // eq. 32
	hMix := x*h(32, wOa) + (1-x)*h(24, wRa)
	tMix := (hMix - 2501*wMix) / (1.006 + 1.86*wMix) // eq. 32 solved for t
	tdWant, err := psychro.DewPointFromHumRatio(wMix, p)
	require.NoError(t, err)
	for _, tt := range []struct {
		name string
		tOut func(int) float64
	}{
		{"outdoor and return apart", constant(32)},
		// Half the steps read the outdoor sensor 1 K from the return: the
		// temperatures cannot tell the share there; the hour's other half can.
		{"half the hour too close", func(i int) float64 {
			if i%2 == 0 {
				return 25
			}
			return 32
		}},
	} {
		t.Run(tt.name, func(t *testing.T) {
			rec := metrics.Compute(u, newHour(day0, map[metrics.Role]func(int) float64{
				metrics.RoleEnteringTemp: constant(tMix),
				metrics.RoleReturnTemp:   constant(24), metrics.RoleReturnRH: constant(0.5),
				metrics.RoleOutdoorTemp: tt.tOut, metrics.RoleOutdoorRH: func(i int) float64 {
					// the outdoor RH at the logged outdoor temperature for the
					// same outdoor moisture
					rh, _ := psychro.RHFromHumRatio(tt.tOut(i), wOa, p)
					return rh
				},
				metrics.RoleLeavingTemp: constant(12), metrics.RoleSupplyTemp: constant(17), metrics.RoleSupplyFlow: constant(3),
			}))
			require.Equal(t, 1.0, rec.Coverage)
			assert.InDelta(t, tdWant, rec.EnteringDewPointC, 0.05, "dew point of the mixed air")
		})
	}
}

// TestCompute_SpaceGain: a space dew-point target without space sensors
// needs the supply drier than the space limit by what the space adds. With
// the assumed 0.8 g/kg the required supply W is W(13 °C dew point) - 0.0008
// (by hand), the hour says the gain was assumed, and less of the reheat is
// avoidable than with no gain at all.
func TestCompute_SpaceGain(t *testing.T) {
	u := testAirHandler()
	u.Target = metrics.Target{Kind: metrics.TargetSpaceDewPoint, DewPointC: 13}
	u.SpaceGain = metrics.DefaultSpaceGain
	vals := map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: constant(25), metrics.RoleEnteringRH: constant(0.65),
		metrics.RoleLeavingTemp: constant(10), metrics.RoleLeavingRH: constant(0.95),
		metrics.RoleSupplyTemp: constant(17), metrics.RoleSupplyFlow: constant(3),
	}
	rec := metrics.Compute(u, newHour(day0, vals))
	wSpace, err := psychro.HumRatioFromDewPoint(13, u.PressurePa)
	require.NoError(t, err)
	pw, err := psychro.VapPressureFromHumRatio(wSpace-0.0008, u.PressurePa)
	require.NoError(t, err)
	tReq, err := psychro.DewPointFromVapPressure(pw / 0.95)
	require.NoError(t, err)
	assert.InDelta(t, tReq, rec.RequiredLeavingC, 1e-6)
	assert.Contains(t, rec.Flags, metrics.FlagSpaceGainAssumed)
	none := *u
	none.SpaceGain = 0
	r0 := metrics.Compute(&none, newHour(day0, vals))
	assert.Greater(t, r0.ReheatAvoidKWh, rec.ReheatAvoidKWh, "no gain overstates the avoidable reheat")
	// With space sensors the gain is observed, not assumed.
	vals[metrics.RoleSpaceTemp], vals[metrics.RoleSpaceRH] = constant(23), constant(0.55)
	assert.NotContains(t, metrics.Compute(u, newHour(day0, vals)).Flags, metrics.FlagSpaceGainAssumed)
}
