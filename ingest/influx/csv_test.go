package influx

import (
	"errors"
	"fmt"
	"io"
	"strings"
	"testing"

	"github.com/influxdata/influxdb-client-go/v2/api"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// annotatedCSV is a Flux result as InfluxDB 1.8 sends it (its shape copied
// from a response of the test server): two results, tables with defaults,
// quoted names with commas and quotes, nanosecond times, and long, boolean
// and unsigned values.
const annotatedCSV = `#datatype,string,long,dateTime:RFC3339,dateTime:RFC3339,dateTime:RFC3339,double,string,string,string
#group,false,false,true,true,false,false,true,true,true
#default,_result,,,,,,,,
,result,table,_start,_stop,_time,_value,_field,_measurement,"k_"") |> drop("
,,0,2024-07-15T00:00:00Z,2024-07-16T00:00:00Z,2024-07-15T14:00:08Z,8,"f_"") |> drop(","m_a,b","v_""x"""
,,0,2024-07-15T00:00:00Z,2024-07-16T00:00:00Z,2024-07-15T14:00:09.000000001Z,-1.5e-3,"f_"") |> drop(","m_a,b","v_""x"""

#datatype,string,long,dateTime:RFC3339,double,string,string,string
#group,false,false,false,false,true,true,true
#default,g1,,,,,,
,result,table,_time,_value,_field,_measurement,ahu
,,1,2024-07-15T14:00:00Z,12.5,supply,ahu,AHU-1
,,1,2024-07-15T14:01:00Z,12.75,supply,ahu,AHU-1
,,2,2024-07-15T14:00:00Z,13,supply,ahu,AHU-2

#datatype,string,long,dateTime:RFC3339,long,string,string
#group,false,false,false,false,true,true
#default,g1,,,,,
,result,table,_time,_value,_field,_measurement
,,3,2024-07-15T14:00:00Z,42,count,ahu

#datatype,string,long,dateTime:RFC3339,boolean,string,string
#group,false,false,false,false,true,true
#default,g1,,,,,
,result,table,_time,_value,_field,_measurement
,,4,2024-07-15T14:00:00Z,true,fan_on,ahu
,,4,2024-07-15T14:00:01Z,false,fan_on,ahu

#datatype,string,long,dateTime:RFC3339,unsignedLong,string,string
#group,false,false,false,false,true,true
#default,g1,,,,,
,result,table,_time,_value,_field,_measurement
,,5,2024-07-15T14:00:00Z,18446744073709551615,runtime,ahu
`

// TestFluxCSV_MatchesClientLibrary reads the same result with fluxCSV and
// with the client library's own parser and compares them row by row.
func TestFluxCSV_MatchesClientLibrary(t *testing.T) {
	lib := api.NewQueryTableResult(io.NopCloser(strings.NewReader(annotatedCSV)))
	f := newFluxCSV(strings.NewReader(annotatedCSV))
	rows := 0
	for lib.Next() {
		require.NoError(t, f.next(), "row %d", rows)
		rec := lib.Record()
		assert.Equal(t, rec.Result(), f.result, "row %d result", rows)
		assert.Equal(t, fmt.Sprint(rec.Table()), f.table, "row %d table", rows)
		at, err := f.time()
		require.NoError(t, err)
		assert.Equal(t, rec.Time(), at, "row %d time", rows)
		v, err := f.value()
		require.NoError(t, err)
		switch want := rec.Value().(type) {
		case float64:
			assert.Equal(t, want, v)
		case int64:
			assert.Equal(t, float64(want), v)
		case uint64:
			assert.Equal(t, float64(want), v)
		case bool:
			assert.Equal(t, map[bool]float64{true: 1, false: 0}[want], v)
		default:
			t.Fatalf("row %d: unexpected value type %T", rows, want)
		}
		for k, want := range rec.Values() {
			if s, ok := want.(string); ok {
				assert.Equal(t, s, f.get(k), "row %d column %q", rows, k)
			}
		}
		rows++
	}
	require.NoError(t, lib.Err())
	assert.Equal(t, 9, rows)
	assert.ErrorIs(t, f.next(), io.EOF)
}

func TestFluxCSV_NewTable(t *testing.T) {
	f := newFluxCSV(strings.NewReader(annotatedCSV))
	var starts []string
	for f.next() == nil {
		if f.newTable {
			starts = append(starts, f.result+"/"+f.table)
		}
	}
	assert.Equal(t, []string{"_result/0", "g1/1", "g1/2", "g1/3", "g1/4", "g1/5"}, starts)
}

func TestFluxCSV_ErrorTable(t *testing.T) {
	const body = `#datatype,string,string
#group,true,true
#default,,
,error,reference
,"failed to initialize execute state: could not find bucket ""x""",897
`
	err := newFluxCSV(strings.NewReader(body)).next()
	var qe *queryError
	require.True(t, errors.As(err, &qe), "got %v", err)
	assert.Equal(t, `failed to initialize execute state: could not find bucket "x" (reference 897)`, err.Error())
}

func TestFluxCSV_StringValueIsError(t *testing.T) {
	const body = `#datatype,string,long,dateTime:RFC3339,string
#group,false,false,false,false
#default,_result,,,
,result,table,_time,_value
,,0,2024-07-15T14:00:00Z,on
`
	f := newFluxCSV(strings.NewReader(body))
	require.NoError(t, f.next())
	_, err := f.value()
	assert.ErrorContains(t, err, `value "on" is a string, not a number`)
}
