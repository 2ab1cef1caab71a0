package draft

import (
	"bufio"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/stretchr/testify/require"
	"go.yaml.in/yaml/v3"

	"github.com/dewline/dewline/ingest/csvfile"
	"github.com/dewline/dewline/ingest/influx"
)

// fixtureDir holds the invented buildings and their hand-written roles.
const fixtureDir = "../../testdata/draft"

// fixtures are the invented buildings, one naming style each.
var fixtures = []struct {
	file  string
	style string
}{
	{"northgate-library.csv", "wide, underscores, trade abbreviations (MAT, CCLT, SA_CFM), unit row"},
	{"kestrel-depot.csv", "wide, SI, quantity.location.unit word order, semicolons, unit row"},
	{"alder-court.csv", "long, CamelCase (Ahu01ClgCoilLvgTemp), units column"},
	{"birchwood-annex.csv", "wide, slashes and hyphens (Bldg2/AH-5/CC-DAT), no units at all"},
	{"haystack-hq.lp", "InfluxDB, Project Haystack marker tags, cryptic names"},
	{"brick-campus.lp", "InfluxDB, Brick classes and isPointOf, cryptic names"},
	{"larkspur-clinic.csv", "wide, words with spaces, no mixed-air humidity: return and outdoor air to be mixed"},
}

// expectation is one hand-written line of expected.yaml.
type expectation struct {
	AHU  string `yaml:"ahu"`
	Role string `yaml:"role"`
	Unit string `yaml:"unit"`
	Low  bool   `yaml:"low"`
}

func loadExpected(t *testing.T) map[string]map[string]expectation {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(fixtureDir, "expected.yaml"))
	require.NoError(t, err)
	var out map[string]map[string]expectation
	require.NoError(t, yaml.Unmarshal(b, &out))
	return out
}

// loadFixture reads a fixture's points: CSV through ReadCSV, line protocol
// through FromSeries, as InfluxDB discovery would hand them over.
func loadFixture(t *testing.T, file string) []Point {
	t.Helper()
	path := filepath.Join(fixtureDir, file)
	if strings.HasSuffix(file, ".lp") {
		return FromSeries(parseLineProtocol(t, path))
	}
	pts, _, err := ReadCSV([]string{path}, csvfile.Options{Location: time.UTC})
	require.NoError(t, err)
	return pts
}

// fixtureKey names a point as expected.yaml does.
func fixtureKey(p *Point) string {
	if v := p.Tags["id"]; v != "" {
		return v
	}
	if v := p.Tags["name"]; v != "" {
		return v
	}
	return p.Ref.Name()
}

// parseLineProtocol reads the subset of InfluxDB line protocol the
// fixtures use: escaped tags, one numeric field, nanosecond times.
func parseLineProtocol(t *testing.T, path string) []influx.SeriesSample {
	t.Helper()
	f, err := os.Open(path)
	require.NoError(t, err)
	defer f.Close()
	idx := map[string]int{}
	var out []influx.SeriesSample
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := sc.Text()
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		parts := splitEscaped(line, ' ')
		require.Len(t, parts, 3, line)
		head := splitEscaped(parts[0], ',')
		tags := map[string]string{}
		for _, kv := range head[1:] {
			k, v, ok := strings.Cut(kv, "=")
			require.True(t, ok, kv)
			tags[unescape(k)] = unescape(v)
		}
		field, val, _ := strings.Cut(parts[1], "=")
		x, err := strconv.ParseFloat(val, 64)
		require.NoError(t, err)
		ns, err := strconv.ParseInt(parts[2], 10, 64)
		require.NoError(t, err)
		key := parts[0] + " " + field
		i, ok := idx[key]
		if !ok {
			i = len(out)
			idx[key] = i
			out = append(out, influx.SeriesSample{Measurement: head[0], Field: field, Tags: tags})
		}
		out[i].Times = append(out[i].Times, time.Unix(0, ns).UTC())
		out[i].Values = append(out[i].Values, x)
	}
	require.NoError(t, sc.Err())
	return out
}

func splitEscaped(s string, sep byte) []string {
	var out []string
	start := 0
	for i := 0; i < len(s); i++ {
		if s[i] == '\\' {
			i++
			continue
		}
		if s[i] == sep {
			out = append(out, s[start:i])
			start = i + 1
		}
	}
	return append(out, s[start:])
}

func unescape(s string) string {
	return strings.NewReplacer(`\ `, " ", `\,`, ",", `\=`, "=").Replace(s)
}
