package agent

import (
	"context"
	"fmt"
	"time"

	"github.com/rs/zerolog"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/ingest/store"
)

// CheckPoints looks up every owned point once at start, in a store that
// cannot tell a point that does not exist from one that is quiet
// (InfluxDB): a misspelt measurement, field or tag would otherwise only
// show as hours without data. A missing point is logged and shown as its
// air handler's problem (problem); a store that does not answer is left to
// the runs to report.
func CheckPoints(ctx context.Context, pc store.PointChecker, missing func(error) bool, cfg *config.Config, owned []string, problem func(ahu, reason string), log zerolog.Logger) {
	ctx, cancel := context.WithTimeout(ctx, time.Minute)
	defer cancel()
	to := time.Now()
	from := to.Add(-cfg.Schedule.Backfill)
	for _, id := range owned {
		a, _ := cfg.AirHandler(id)
		for role, ref := range a.PointMap() {
			err := pc.CheckPoint(ctx, ref, from, to)
			switch {
			case err == nil:
			case missing(err):
				log.Warn().Str("ahu", id).Str("role", string(role)).Err(err).Msg("point not found in InfluxDB")
				problem(id, fmt.Sprintf("%s: %v", role, err))
			default:
				log.Warn().Err(err).Msg("could not check the points in InfluxDB; runs will report the store")
				return
			}
		}
	}
}
