package draft

import (
	"context"
	"fmt"
	"os"
	"sort"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest/influx"
)

// ReadInflux lists the series of an InfluxDB bucket that hold numbers in
// [from, to) and turns them into points, with the last perSeries values of
// each for their statistics.
func ReadInflux(ctx context.Context, c *influx.Client, from, to time.Time, perSeries int) ([]Point, error) {
	series, err := c.Discover(ctx, from, to, perSeries)
	if err != nil {
		return nil, err
	}
	return FromSeries(series), nil
}

// FromSeries turns discovered series into points. Each point's reference
// carries the fewest tags that tell its series from the others of the same
// measurement and field (an id tag when there is one), so that a read
// matches exactly one series.
func FromSeries(series []influx.SeriesSample) []Point {
	type mf struct{ m, f string }
	siblings := map[mf][]map[string]string{}
	for _, s := range series {
		k := mf{s.Measurement, s.Field}
		siblings[k] = append(siblings[k], s.Tags)
	}
	points := make([]Point, 0, len(series))
	for _, s := range series {
		p := Point{Tags: s.Tags}
		p.Ref.Measurement, p.Ref.Field = s.Measurement, s.Field
		p.Ref.Tags = identifyingTags(s.Tags, siblings[mf{s.Measurement, s.Field}])
		p.Name = influxName(s)
		for i, t := range s.Times {
			p.Stats.Add(t, s.Values[i])
		}
		points = append(points, p)
	}
	return points
}

// identifyingTags picks, in a fixed order of preference, tags of own until
// no sibling series carries them all with the same values.
func identifyingTags(own map[string]string, siblings []map[string]string) map[string]string {
	if len(siblings) <= 1 {
		return nil
	}
	keys := make([]string, 0, len(own))
	for k := range own {
		keys = append(keys, k)
	}
	rank := func(k string) int {
		switch lk := strings.ToLower(k); {
		case lk == "id":
			return 0
		case nameKeys[lk]:
			return 1
		case equipKeys[lk]:
			return 2
		}
		return 3
	}
	sort.Slice(keys, func(i, j int) bool {
		if ri, rj := rank(keys[i]), rank(keys[j]); ri != rj {
			return ri < rj
		}
		return keys[i] < keys[j]
	})
	chosen := map[string]string{}
	for _, k := range keys {
		chosen[k] = own[k]
		n := 0
		for _, sib := range siblings {
			match := true
			for ck, cv := range chosen {
				if sib[ck] != cv {
					match = false
					break
				}
			}
			if match {
				n++
			}
		}
		if n <= 1 {
			return chosen
		}
	}
	return chosen
}

// influxName is the text the name rules read for a series: its measurement,
// its field unless generic, and its descriptive tag values.
func influxName(s influx.SeriesSample) string {
	parts := []string{s.Measurement}
	switch strings.ToLower(s.Field) {
	case "value", "val", "v", "_value", "cur", "curval":
	default:
		parts = append(parts, s.Field)
	}
	st := readTags(s.Tags)
	parts = append(parts, st.names...)
	return strings.Join(parts, " ")
}

// Bucket is an InfluxDB bucket to read the points from.
type Bucket struct {
	URL, Bucket, Org string
	// TokenEnv names the environment variable holding the token ("user:pass"
	// for 1.8); empty or unset: no authentication.
	TokenEnv string
	// To ends the window (RFC 3339; empty: now); Since is its length.
	To    string
	Since time.Duration
}

// ReadBucket connects to the bucket and reads its points (ReadInflux, the
// last 500 values of each series), and fills in the site's sources and
// store to match.
func ReadBucket(ctx context.Context, b Bucket, site *Site) ([]Point, error) {
	to := time.Now()
	if b.To != "" {
		t, err := time.Parse(time.RFC3339, b.To)
		if err != nil {
			return nil, &InputError{fmt.Sprintf("--to %q: use RFC 3339, e.g. 2026-07-01T00:00:00Z", b.To)}
		}
		to = t
	}
	from := to.Add(-b.Since)
	token := ""
	if b.TokenEnv != "" {
		token = strings.TrimSpace(os.Getenv(b.TokenEnv))
	}
	c, err := influx.New(influx.Options{URL: b.URL, Org: b.Org, Bucket: b.Bucket, Token: token})
	if err != nil {
		return nil, err
	}
	defer c.Close()
	points, err := ReadInflux(ctx, c, from, to, 500)
	if err != nil {
		return nil, err
	}
	site.Sources = []string{fmt.Sprintf("InfluxDB %s, bucket %s, %s to %s", b.URL, b.Bucket, from.UTC().Format(time.RFC3339), to.UTC().Format(time.RFC3339))}
	site.InfluxURL, site.InfluxBucket, site.InfluxOrg = b.URL, b.Bucket, b.Org
	if token != "" {
		site.InfluxTokenEnv = b.TokenEnv
	}
	return points, nil
}
