package agent

import (
	"context"
	"errors"
	"math"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/metrics"
)

// hourSource is a fake store of aligned hours.
type hourSource struct {
	hours int
	read  int
}

func (s *hourSource) Hours(ctx context.Context, ahus []string, from, to time.Time, fn func(*metrics.Hour) error) error {
	for i := 0; i < s.hours; i++ {
		for _, a := range ahus {
			h := &metrics.Hour{AHU: a, Start: from.Add(time.Duration(i) * time.Hour), Step: time.Minute,
				Values: map[metrics.Role][]float64{}, Quality: map[metrics.Role]metrics.RoleQuality{}}
			for r, v := range map[metrics.Role]float64{metrics.RoleEnteringTemp: 25, metrics.RoleEnteringRH: 0.35,
				metrics.RoleLeavingTemp: 12, metrics.RoleSupplyTemp: 18, metrics.RoleSupplyFlow: 2} {
				vals := make([]float64, 60)
				for k := range vals {
					vals[k] = v + 0.01*float64(k%3)
				}
				if i == 5 && r == metrics.RoleSupplyFlow {
					vals[0] = math.Inf(1) // an hour the engine must survive
				}
				h.Values[r] = vals
			}
			s.read++
			if err := fn(h); err != nil {
				return err
			}
		}
	}
	return nil
}

var _ HourSource = (*hourSource)(nil)

// twoAirHandlers is the minimal configuration with electric reheat and a
// second air handler, AHU-Y, a copy of the first.
func twoAirHandlers(t *testing.T) *config.Config {
	t.Helper()
	cfg, err := config.Load("../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	cfg.AirHandlers[0].Reheat.Kind = "electric"
	cfg.AirHandlers = append(cfg.AirHandlers, cfg.AirHandlers[0])
	cfg.AirHandlers[1].ID = "AHU-Y"
	return cfg
}

func TestAnalyzer_OrderAndAlerts(t *testing.T) {
	cfg := twoAirHandlers(t)
	from := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	an := &Analyzer{Cfg: cfg, Source: &hourSource{hours: 30}}
	seen := map[string][]time.Time{}
	var transitions []metrics.Transition
	var progress []int
	an.Progress = func(done, total int) { progress = append(progress, done) }
	sums, failed, err := an.Run(context.Background(), from, from.Add(30*time.Hour), nil, func(_ context.Context, r *metrics.Record, tr []metrics.Transition) error {
		seen[r.AHU] = append(seen[r.AHU], r.HourStart)
		transitions = append(transitions, tr...)
		return nil
	})
	require.NoError(t, err)
	assert.Empty(t, failed)
	for _, a := range []string{"AHU-X", "AHU-Y"} {
		require.Len(t, seen[a], 30, a)
		for i := range seen[a] {
			assert.Equal(t, from.Add(time.Duration(i)*time.Hour), seen[a][i], "%s hour %d in order", a, i)
		}
		assert.Equal(t, 30, sums[a].Hours)
		assert.Greater(t, sums[a].ReheatAvoidKWh, 0.0, "dry entering air: the reheat was avoidable")
	}
	// Entering air at 35 % RH is below the 12 °C supply dew point target:
	// the reheat is not needed, so that alert opens for both units.
	opened := 0
	for _, tr := range transitions {
		if tr.Alert.Kind == metrics.AlertReheatNotNeeded && tr.To == metrics.StatusOpen {
			opened++
		}
	}
	assert.Equal(t, 2, opened)
	assert.Len(t, progress, 60)
	assert.Equal(t, 60, progress[len(progress)-1])
}

func TestAnalyzer_PutErrorStops(t *testing.T) {
	cfg, err := config.Load("../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	src := &hourSource{hours: 5000}
	an := &Analyzer{Cfg: cfg, Source: src}
	boom := errors.New("disk full")
	n := 0
	from := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	_, _, err = an.Run(context.Background(), from, from.Add(5000*time.Hour), nil, func(context.Context, *metrics.Record, []metrics.Transition) error {
		n++
		if n == 10 {
			return boom
		}
		return nil
	})
	assert.ErrorIs(t, err, boom)
	assert.Equal(t, 10, n, "nothing is put after the failure")
	assert.Less(t, src.read, 5000, "the source stops reading")
}

func TestAnalyzer_Cancel(t *testing.T) {
	cfg, err := config.Load("../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	ctx, cancel := context.WithCancel(context.Background())
	from := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
	an := &Analyzer{Cfg: cfg, Source: &hourSource{hours: 5000}}
	n := 0
	_, _, err = an.Run(ctx, from, from.Add(5000*time.Hour), nil, func(context.Context, *metrics.Record, []metrics.Transition) error {
		n++
		if n == 3 {
			cancel()
		}
		return nil
	})
	assert.ErrorIs(t, err, context.Canceled)
}
