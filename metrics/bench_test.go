package metrics_test

import (
	"math"
	"testing"

	"github.com/dewline/dewline/metrics"
)

// BenchmarkCompute: one air handler-hour of one-minute data with space
// sensors (so the required coil temperature changes every step).
func BenchmarkCompute(b *testing.B) {
	u := testAirHandler()
	u.Target = metrics.Target{Kind: metrics.TargetSpaceDewPoint, DewPointC: 12.8}
	h := newHour(day0, map[metrics.Role]func(int) float64{
		metrics.RoleEnteringTemp: func(i int) float64 { return 25 + math.Sin(float64(i)/9) },
		metrics.RoleEnteringRH:   func(i int) float64 { return 0.6 + 0.03*math.Cos(float64(i)/7) },
		metrics.RoleLeavingTemp:  func(i int) float64 { return 10.5 + 0.3*math.Sin(float64(i)/5) },
		metrics.RoleSupplyTemp:   func(i int) float64 { return 17.5 + 0.2*math.Cos(float64(i)/4) },
		metrics.RoleSupplyFlow:   constant(4),
		metrics.RoleSpaceTemp:    constant(23.5),
		metrics.RoleSpaceRH:      func(i int) float64 { return 0.5 + 0.01*math.Sin(float64(i)/3) },
		metrics.RoleOutdoorTemp:  constant(31),
	})
	b.ReportAllocs()
	for b.Loop() {
		r := metrics.Compute(u, h)
		if r.Coverage != 1 {
			b.Fatal(r.Coverage)
		}
	}
	b.ReportMetric(float64(b.N*60)/b.Elapsed().Seconds(), "steps/s")
}
