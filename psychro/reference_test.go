package psychro

import (
	"encoding/csv"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// refRow is one row of testdata/reference/ashrae-fundamentals-ch1-checks.csv.
// Sources, per row prefix (see testdata/reference/README.md):
//   - T1, T2, T3, EX: ASHRAE Handbook - Fundamentals 2017, ch. 1, Tables 1-3
//     and Example 1, as cited by the PsychroLib test suite (MIT licence).
//   - XL: values the PsychroLib authors computed from the ASHRAE equations.
//   - KS: an online sea-level pressure calculator cited by PsychroLib's tests.
//   - M2, M3: recalled from memory, to be cross-checked; disagreements are
//     reported, and fail only when a row drifts beyond its recorded
//     disagreement (memoryDisagreement) or a row that agreed stops agreeing.
//   - CP: common practice, no source (tested in rules_test.go).
type refRow struct {
	id, quantity, system string
	in                   map[string]float64
	inRaw                string
	expected             float64
	tolType              string
	tol                  float64
	kind                 string
}

func loadReference(t *testing.T) []refRow {
	t.Helper()
	f, err := os.Open("../testdata/reference/ashrae-fundamentals-ch1-checks.csv")
	require.NoError(t, err)
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	require.NoError(t, err)
	require.Greater(t, len(recs), 100)
	var rows []refRow
	for _, r := range recs[1:] {
		row := refRow{id: r[0], quantity: r[1], system: r[2], inRaw: r[3], tolType: r[6], kind: r[11], in: map[string]float64{}}
		row.expected, _ = strconv.ParseFloat(r[4], 64)
		row.tol, _ = strconv.ParseFloat(r[7], 64)
		for _, kv := range strings.Split(r[3], ";") {
			k, v, ok := strings.Cut(kv, "=")
			if !ok {
				continue
			}
			if x, err := strconv.ParseFloat(v, 64); err == nil {
				row.in[k] = x
			}
		}
		rows = append(rows, row)
	}
	return rows
}

// pressureOf returns the row's pressure in Pa, from p_Pa or p_psia.
func pressureOf(r refRow) float64 {
	if p, ok := r.in["p_Pa"]; ok {
		return p
	}
	if p, ok := r.in["p_psia"]; ok {
		return PsiToPa(p)
	}
	return StandardPressurePa
}

// tempOf returns a temperature input in °C from the key's C or F variant.
func tempOf(r refRow, base string) float64 {
	if v, ok := r.in[base+"_C"]; ok {
		return v
	}
	return FToC(r.in[base+"_F"])
}

func isIP(r refRow) bool { return r.system == "IP" }

// evalRow computes the quantity a row checks, in the row's units.
func evalRow(t *testing.T, r refRow) float64 {
	t.Helper()
	p := pressureOf(r)
	must := func(v float64, err error) float64 {
		t.Helper()
		require.NoError(t, err, r.id)
		return v
	}
	pOut := func(pa float64) float64 {
		if isIP(r) {
			return PaToPsi(pa)
		}
		return pa
	}
	hOut := func(tC, w float64) float64 {
		if isIP(r) {
			return EnthalpyIP(CToF(tC), w)
		}
		return must(Enthalpy(tC, w)) * 1000 // rows give J/kg
	}
	vOut := func(v float64) float64 {
		if isIP(r) {
			return v / M3PerFt3 * KgPerLb
		}
		return v
	}
	rhoOut := func(rho float64) float64 {
		if isIP(r) {
			return rho * M3PerFt3 / KgPerLb
		}
		return rho
	}
	tOut := func(tC float64) float64 {
		if isIP(r) {
			return CToF(tC)
		}
		return tC
	}
	// Example 1 state from dry bulb and wet bulb.
	ex1 := func() State {
		if isIP(r) {
			return must2(t, r.id)(NewStateIPWetBulb(r.in["t_db_F"], r.in["t_wb_F"], r.in["p_psia"]))
		}
		return must2(t, r.id)(NewStateWetBulb(tempOf(r, "t_db"), tempOf(r, "t_wb"), p))
	}
	switch r.quantity {
	case "saturation vapour pressure p_ws":
		return pOut(must(SatVapPressure(tempOf(r, "t"))))
	case "humidity ratio at saturation W_s":
		return must(SatHumRatio(tempOf(r, "t"), p))
	case "enthalpy of saturated moist air h_s":
		tc := tempOf(r, "t")
		return hOut(tc, must(SatHumRatio(tc, p)))
	case "dry-air enthalpy h_da":
		return hOut(tempOf(r, "t"), 0)
	case "dry-air specific volume v_da":
		return vOut(must(SpecificVolume(tempOf(r, "t"), 0, p)))
	case "dry-air density (1/v_da)":
		return rhoOut(must(Density(tempOf(r, "t"), 0, p)))
	case "specific volume of saturated moist air v_s":
		tc := tempOf(r, "t")
		return vOut(must(SpecificVolume(tc, must(SatHumRatio(tc, p)), p)))
	case "humidity ratio W":
		return ex1().HumRatio
	case "dew-point temperature t_d":
		return tOut(ex1().DewPointC)
	case "relative humidity":
		return ex1().RH
	case "moist-air enthalpy h":
		if strings.Contains(r.inRaw, "t_wb") {
			s := ex1()
			return hOut(s.DryBulbC, s.HumRatio)
		}
		return hOut(tempOf(r, "t"), r.in["W"])
	case "moist-air specific volume v":
		if strings.Contains(r.inRaw, "t_wb") {
			return vOut(ex1().VolumeM3PerKg)
		}
		return vOut(must(SpecificVolume(tempOf(r, "t"), r.in["W"], p)))
	case "moist-air density":
		return rhoOut(must(Density(tempOf(r, "t"), r.in["W"], p)))
	case "wet-bulb temperature t_wb (round trip)":
		// Example 1 inputs: the computed dew point or RH is fed back and the
		// wet bulb must come out as the published one.
		var tdb, twb float64
		if isIP(r) {
			tdb, twb = FToC(100), FToC(65)
		} else {
			tdb, twb = 40, 20
		}
		s := must2(t, r.id)(NewStateWetBulb(tdb, twb, p))
		if isIP(r) {
			s = must2(t, r.id)(NewStateIPWetBulb(100, 65, PaToPsi(p)))
		}
		var back State
		if strings.Contains(r.inRaw, "t_d=") {
			back = must2(t, r.id)(NewStateDewPoint(tdb, s.DewPointC, p))
		} else {
			back = must2(t, r.id)(NewStateRH(tdb, s.RH, p))
		}
		if isIP(r) {
			return back.IP().WetBulbF
		}
		return back.WetBulbC
	case "standard atmospheric pressure":
		if a, ok := r.in["altitude_m"]; ok {
			return must(PressureFromAltitude(a))
		}
		return PaToPsi(must(PressureFromAltitude(FtToM(r.in["altitude_ft"]))))
	case "standard atmospheric temperature":
		if a, ok := r.in["altitude_m"]; ok {
			return must(TemperatureFromAltitude(a))
		}
		return CToF(must(TemperatureFromAltitude(FtToM(r.in["altitude_ft"]))))
	case "humidity ratio from vapour pressure":
		if pw, ok := r.in["p_w_Pa"]; ok {
			return must(HumRatioFromVapPressure(pw, p))
		}
		return must(HumRatioFromVapPressure(PsiToPa(r.in["p_w_psia"]), p))
	case "vapour pressure from RH":
		s := must2(t, r.id)(NewStateRH(tempOf(r, "t"), r.in["RH"], StandardPressurePa))
		return pOut(s.VapPressurePa)
	case "humidity ratio from wet bulb", "humidity ratio from wet bulb (ice bulb)":
		if isIP(r) {
			return must(HumRatioFromWetBulbIP(r.in["t_db_F"], r.in["t_wb_F"], r.in["p_psia"]))
		}
		return must(HumRatioFromWetBulb(tempOf(r, "t_db"), tempOf(r, "t_wb"), p))
	case "sea-level pressure from station pressure":
		if ps, ok := r.in["p_station_Pa"]; ok {
			return must(SeaLevelPressure(ps, r.in["altitude_m"], r.in["t_C"]))
		}
		return PaToPsi(must(SeaLevelPressure(PsiToPa(r.in["p_station_psia"]), FtToM(r.in["altitude_ft"]), FToC(r.in["t_F"]))))
	}
	t.Fatalf("%s: no evaluator for quantity %q", r.id, r.quantity)
	return 0
}

func must2(t *testing.T, id string) func(State, error) State {
	return func(s State, err error) State {
		t.Helper()
		require.NoError(t, err, id)
		return s
	}
}

// memoryDisagreement is, for each memory row that disagrees with the code
// beyond its tolerance, how far it disagreed when the row was last
// reviewed, in the row's own measure (relative or absolute), rounded up.
// The recalled value may be the wrong one (it is from memory); the bound
// only catches the code moving.
var memoryDisagreement = map[string]float64{
	// W_s at 40 °C, sea level: the code gives 0.0488826, as npm
	// psychrolib 1.1.1's GetSatHumRatio does; the recalled 0.049141 is
	// 0.53 % higher.
	"M2-114": 0.0053,
}

// TestReference checks every published row of the reference table at the
// tolerance the row gives. Sources: see refRow.
func TestReference(t *testing.T) {
	checked := 0
	for _, r := range loadReference(t) {
		if strings.HasPrefix(r.id, "CP-") {
			continue // rules of thumb: rules_test.go
		}
		t.Run(r.id, func(t *testing.T) {
			got := evalRow(t, r)
			var diff, limit float64
			if r.tolType == "rel" {
				diff, limit = math.Abs(got-r.expected)/math.Abs(r.expected), r.tol
			} else {
				diff, limit = math.Abs(got-r.expected), r.tol
			}
			if strings.HasPrefix(r.kind, "memory") {
				// Recalled values: report, do not bend the code to them; but
				// a row may not drift further than its recorded disagreement
				// (memoryDisagreement), and a row that agreed must keep
				// agreeing, so a change to the code shows here.
				if diff > limit {
					t.Logf("memory row %s (%s) disagrees: got %.6g, recalled %.6g (diff %.3g > %.3g)", r.id, r.quantity, got, r.expected, diff, limit)
					recorded, ok := memoryDisagreement[r.id]
					assert.Truef(t, ok, "memory row %s agreed before and now disagrees by %.3g (%s tolerance %g)", r.id, diff, r.tolType, r.tol)
					assert.LessOrEqualf(t, diff, recorded, "memory row %s moved further from the recalled value than its recorded disagreement", r.id)
				}
				return
			}
			assert.LessOrEqualf(t, diff, limit, "%s %s: got %.8g want %.8g (%s %g)", r.id, r.quantity, got, r.expected, r.tolType, r.tol)
		})
		checked++
	}
	assert.Equal(t, 130, checked, "every non-rule-of-thumb row is checked")
}
