package csvfile

import (
	"math/rand/v2"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// TestWallResolver_Transitions: hand-worked wall times at the 2026 changes.
// US: spring forward Sunday 2026-03-08 02:00 EST -> 03:00 EDT, fall back
// Sunday 2026-11-01 02:00 EDT -> 01:00 EST. EU: forward Sunday 2026-03-29
// 02:00 CET -> 03:00 CEST, back Sunday 2026-10-25 03:00 CEST -> 02:00 CET.
// Lord Howe Island moves by half an hour: back Sunday 2026-04-05 02:00
// (UTC+11) -> 01:30 (UTC+10:30).
func TestWallResolver_Transitions(t *testing.T) {
	tests := []struct {
		name        string
		zone        string
		wall        time.Time // read as wall clock
		early, late time.Time // UTC; zero for a gap
	}{
		{"us before gap", "America/New_York", wallOf(2026, 3, 8, 1, 59, 0, 0), utc(2026, 3, 8, 6, 59, 0, 0), utc(2026, 3, 8, 6, 59, 0, 0)},
		{"us gap", "America/New_York", wallOf(2026, 3, 8, 2, 30, 0, 0), time.Time{}, time.Time{}},
		{"us after gap", "America/New_York", wallOf(2026, 3, 8, 3, 0, 0, 0), utc(2026, 3, 8, 7, 0, 0, 0), utc(2026, 3, 8, 7, 0, 0, 0)},
		{"us repeated", "America/New_York", wallOf(2026, 11, 1, 1, 30, 0, 0), utc(2026, 11, 1, 5, 30, 0, 0), utc(2026, 11, 1, 6, 30, 0, 0)},
		{"us after repeat", "America/New_York", wallOf(2026, 11, 1, 2, 0, 0, 0), utc(2026, 11, 1, 7, 0, 0, 0), utc(2026, 11, 1, 7, 0, 0, 0)},
		{"eu gap", "Europe/Berlin", wallOf(2026, 3, 29, 2, 0, 0, 0), time.Time{}, time.Time{}},
		{"eu repeated", "Europe/Berlin", wallOf(2026, 10, 25, 2, 15, 0, 0), utc(2026, 10, 25, 0, 15, 0, 0), utc(2026, 10, 25, 1, 15, 0, 0)},
		{"eu after repeat", "Europe/Berlin", wallOf(2026, 10, 25, 3, 0, 0, 0), utc(2026, 10, 25, 2, 0, 0, 0), utc(2026, 10, 25, 2, 0, 0, 0)},
		{"half hour repeated", "Australia/Lord_Howe", wallOf(2026, 4, 5, 1, 45, 0, 0), utc(2026, 4, 4, 14, 45, 0, 0), utc(2026, 4, 4, 15, 15, 0, 0)},
		{"no daylight saving", "Asia/Tokyo", wallOf(2026, 7, 14, 9, 0, 0, 0), utc(2026, 7, 14, 0, 0, 0, 0), utc(2026, 7, 14, 0, 0, 0, 0)},
		{"utc", "UTC", wallOf(2026, 7, 14, 9, 0, 0, 0), utc(2026, 7, 14, 9, 0, 0, 0), utc(2026, 7, 14, 9, 0, 0, 0)},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			z := wallResolver{loc: mustLoad(t, tt.zone)}
			for pass := range 2 { // cold, then with the cache filled
				early, late, k := z.resolve(tt.wall.Unix())
				if tt.early.IsZero() {
					assert.Equal(t, wallNone, k, "pass %d", pass)
					continue
				}
				assert.Equal(t, tt.early.Unix(), early, "pass %d early", pass)
				assert.Equal(t, tt.late.Unix(), late, "pass %d late", pass)
				want := wallOne
				if !tt.early.Equal(tt.late) {
					want = wallTwo
				}
				assert.Equal(t, want, k, "pass %d", pass)
			}
		})
	}
}

// TestWallResolver_Year checks every quarter hour of 2026 (in order, then
// shuffled, so the cache is both kept and refilled) against a brute-force
// reference: the instants u = wall - offset, for every offset the zone uses
// that year, whose own offset (by the time package) is that offset.
func TestWallResolver_Year(t *testing.T) {
	for _, zone := range []string{"America/New_York", "Europe/Berlin", "Australia/Lord_Howe", "America/Sao_Paulo", "Asia/Tokyo"} {
		t.Run(zone, func(t *testing.T) {
			loc := mustLoad(t, zone)
			start := wallOf(2026, 1, 1, 0, 0, 0, 0).Unix()
			const step, n = 900, 365 * 96
			offsets := map[int64]bool{}
			for i := range n + 200 {
				_, off := time.Unix(start+int64(i)*step-86400, 0).In(loc).Zone()
				offsets[int64(off)] = true
			}
			ref := func(wall int64) []int64 {
				var us []int64
				for off := range offsets {
					if _, o := time.Unix(wall-off, 0).In(loc).Zone(); int64(o) == off {
						us = append(us, wall-off)
					}
				}
				if len(us) == 2 && us[0] > us[1] {
					us[0], us[1] = us[1], us[0]
				}
				return us
			}
			walls := make([]int64, n)
			for i := range walls {
				walls[i] = start + int64(i)*step
			}
			check := func(z *wallResolver) {
				for _, w := range walls {
					early, late, k := z.resolve(w)
					want := ref(w)
					switch len(want) {
					case 0:
						require.Equal(t, wallNone, k, "wall %s", time.Unix(w, 0).UTC())
					case 1:
						require.Equal(t, wallOne, k, "wall %s", time.Unix(w, 0).UTC())
						require.Equal(t, want[0], early)
					case 2:
						require.Equal(t, wallTwo, k, "wall %s", time.Unix(w, 0).UTC())
						require.Equal(t, want, []int64{early, late})
					}
				}
			}
			check(&wallResolver{loc: loc})
			rand.New(rand.NewPCG(5, 6)).Shuffle(len(walls), func(i, j int) { walls[i], walls[j] = walls[j], walls[i] })
			check(&wallResolver{loc: loc})
		})
	}
}
