package dashboards

import (
	"context"
	"math"
	"time"

	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// HourStates is one hour's air states through the unit, SI: the means of
// the hour's covered steps. W is the humidity ratio, kg/kg.
type HourStates struct {
	Hour      time.Time `json:"hour"`
	EnteringC Num       `json:"entering_temp_c"`
	EnteringW Num       `json:"entering_w"`
	LeavingC  Num       `json:"leaving_temp_c"`
	LeavingW  Num       `json:"leaving_w"`
	SupplyC   Num       `json:"supply_temp_c"`
	SupplyW   Num       `json:"supply_w"` // reheat adds no moisture: the leaving W
	Reheat    Num       `json:"reheat_kwh"`
	Avoidable Num       `json:"reheat_avoidable_kwh"`
}

// AirHandlerStates reads one unit's hourly states for the psychrometric chart.
// Hours without a complete set of states are left out.
func AirHandlerStates(ctx context.Context, u AirHandler, res Results, p Period, pressurePa float64) ([]HourStates, error) {
	var out []HourStates
	err := res.Hours(ctx, u.ID, p.From, p.To, func(r *metrics.Record) error {
		wIn, err1 := psychro.HumRatioFromDewPoint(r.EnteringDewPointC, pressurePa)
		wLv, err2 := psychro.HumRatioFromDewPoint(r.LeavingDewPointC, pressurePa)
		if err1 != nil || err2 != nil || anyNaN(r.EnteringTempC, r.LeavingTempC, r.SupplyTempC) {
			return nil
		}
		out = append(out, HourStates{Hour: r.HourStart.UTC(),
			EnteringC: Num(r.EnteringTempC), EnteringW: Num(wIn),
			LeavingC: Num(r.LeavingTempC), LeavingW: Num(wLv),
			SupplyC: Num(r.SupplyTempC), SupplyW: Num(wLv),
			Reheat: Num(r.ReheatKWh), Avoidable: Num(r.ReheatAvoidKWh)})
		return nil
	})
	return out, err
}

func anyNaN(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return true
		}
	}
	return false
}
