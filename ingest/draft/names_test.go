package draft

import (
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/metrics"
)

// TestJudge_Names: single names in the trade's usual styles (common
// practice, no source), with the role and the least confidence they must
// get; "" is no role.
func TestJudge_Names(t *testing.T) {
	tests := []struct {
		name, point, ahu string
		role             metrics.Role
		conf             Confidence // at most this when wrong is possible, exactly this otherwise
	}{
		{"words", "AHU-1 Mixed Air Temp", "AHU-1", metrics.RoleEnteringTemp, High},
		{"underscores", "ahu_02_sat", "AHU-2", metrics.RoleSupplyTemp, High},
		{"camel with building", "Bldg1Rtu3Sat", "RTU-3", metrics.RoleSupplyTemp, High},
		{"set point", "AHU-1 SAT SP", "AHU-1", "", 0},
		{"two meanings", "AHU3 EAT", "AHU-3", metrics.RoleEnteringTemp, Low},
		{"reheat valve", "AHU-1 RH VLV", "AHU-1", metrics.RoleReheatValve, High},
		{"return humidity", "AHU-1 RA RH", "AHU-1", metrics.RoleReturnRH, High},
		{"return with number", "AHU-1 Return RH 2", "AHU-1", metrics.RoleReturnRH, High},
		{"return dew point", "AHU-1 RA Dewpoint", "AHU-1", metrics.RoleReturnDewPoint, High},
		{"outdoor airflow", "AHU-2 OA CFM", "AHU-2", metrics.RoleOutdoorFlow, High},
		{"return airflow", "AHU-2 RA CFM", "AHU-2", "", 0},
		{"coil leaving rh", "AHU-4 CC LVG RH", "AHU-4", metrics.RoleLeavingRH, High},
		{"supply dew point", "AHU-1 SA Dewpoint", "AHU-1", metrics.RoleLeavingDewPoint, Medium},
		{"fan status", "AHU-1 SF Status", "AHU-1", "", 0},
		{"vav box", "VAV-2-14 Zone Temp", "!VAV-2", metrics.RoleSpaceTemp, High}, // Propose leaves it out: not an air handler
		{"heating power", "AHU 7 Heating Coil kW", "AHU-7", metrics.RoleReheatPower, Low},
		{"glued abbreviations", "AHU-9 SACFM", "AHU-9", metrics.RoleSupplyFlow, High},
		{"preheat", "AHU-1 PH Valve", "AHU-1", "", 0},
		{"outdoor", "OSA Temp", "", metrics.RoleOutdoorTemp, High},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			p := &Point{Name: tt.point}
			c := judge(p)
			assert.Equal(t, tt.ahu, c.ahu)
			assert.Equal(t, tt.role, c.v.role, "note: %s", c.v.note)
			if tt.role != "" {
				assert.Equal(t, tt.conf, c.v.conf, "evidence: %v", c.v.evidence)
			} else {
				assert.NotEmpty(t, c.v.note, "an unassigned point says why")
			}
		})
	}
}

// TestChooseUnit: what the values say about the unit. Typical ranges are
// metrics' own (common practice, no source).
func TestChooseUnit(t *testing.T) {
	series := func(lo, hi float64, zeros int) *Stats {
		s := &Stats{}
		t0 := time.Date(2026, 7, 14, 0, 0, 0, 0, time.UTC)
		for i := 0; i < 60; i++ {
			v := lo + (hi-lo)*float64(i%10)/9
			if i < zeros {
				v = 0
			}
			s.Add(t0.Add(time.Duration(i)*time.Minute), v)
		}
		return s
	}
	tests := []struct {
		name     string
		role     metrics.Role
		declared string
		s        *Stats
		unit     string
		cap      Confidence
	}{
		{"F label, °C values", metrics.RoleSupplyTemp, "F", series(13, 18, 0), "°F", Low},
		{"F label, F values", metrics.RoleSupplyTemp, "°F", series(55, 62, 0), "°F", High},
		{"% label, fraction values", metrics.RoleEnteringRH, "%", series(0.4, 0.6, 0), "%", Low},
		{"no label, fraction values", metrics.RoleEnteringRH, "", series(0.4, 0.6, 0), "fraction", Medium},
		{"no label, F values", metrics.RoleEnteringTemp, "", series(70, 80, 0), "°F", Medium},
		{"no label, °C values", metrics.RoleEnteringTemp, "", series(20, 25, 0), "°C", Medium},
		{"fan off at night", metrics.RoleSupplyFlow, "CFM", series(9000, 11000, 30), "CFM", High},
		{"unit of another kind", metrics.RoleSupplyTemp, "%", series(55, 62, 0), "°F", Low},
		{"no label airflow", metrics.RoleSupplyFlow, "", series(9000, 11000, 0), "CFM", Low},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c := chooseUnit(tt.role, tt.declared, tt.s, true)
			require.Equal(t, tt.unit, c.unit, c.note)
			assert.Equal(t, tt.cap, c.cap, c.note)
		})
	}
}

// TestSplitWords: separators, case changes and digits.
func TestSplitWords(t *testing.T) {
	assert.Equal(t, []string{"ahu", "01", "clg", "coil", "lvg", "temp"}, splitWords("Ahu01ClgCoilLvgTemp"))
	assert.Equal(t, []string{"sa", "temp"}, splitWords("SATemp"))
	assert.Equal(t, []string{"bldg", "2", "ah", "5", "cc", "dat"}, splitWords("Bldg2/AH-5/CC-DAT"))
}

// TestReadCSV_EmptyColumn: a column without a single value is listed as
// unassigned, not dropped.
func TestReadCSV_EmptyColumn(t *testing.T) {
	path := filepath.Join(t.TempDir(), "x.csv")
	require.NoError(t, os.WriteFile(path, []byte("Time,AHU-1 SAT,AHU-1 Spare Temp\n2026-07-14T06:00:00Z,58,\n2026-07-14T06:05:00Z,58.5,\n"), 0o600))
	pts, _, err := ReadCSV([]string{path}, csvfile.Options{})
	require.NoError(t, err)
	require.Len(t, pts, 2)
	prop := Propose(pts, Options{})
	require.Len(t, prop.Unassigned, 1)
	assert.Equal(t, "AHU-1 Spare Temp", prop.Unassigned[0].Point.Name)
	assert.Contains(t, prop.Unassigned[0].Note, "no numeric value")
}
