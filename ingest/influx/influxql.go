package influx

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/dewline/dewline/ingest"
)

// InfluxDB 1.x answers InfluxQL (its /query endpoint) about two to three
// times faster than Flux for the same raw samples (1.4 to 4.3 times in 18
// runs of the agent benchmarks' bulk reads on 1.8.3, cmd/dewline
// agentbench_test.go), so
// ReadBatch uses it on a 1.x server and Flux elsewhere. The answer is read
// as chunked JSON: the CSV answer would be faster still, but 1.8 leaves a
// statement's error out of it (services/httpd response_writer.go writes
// only a whole response's error as CSV), and a read must never take a
// failed statement for missing data.

// Batch query languages (Client.batchQL).
const (
	batchAuto     = iota // InfluxQL on a 1.x server, Flux otherwise
	batchFlux            // always Flux
	batchInfluxQL        // always InfluxQL
)

// useInfluxQL reports whether ReadBatch should use InfluxQL: on a server
// whose /ping names a 1.x version, or "unknown", which is what a 1.x
// server built from source says (InfluxDB 2.x and Cloud name theirs). The
// version is asked once; a failed ask is tried again next time, and
// meanwhile Flux is used.
func (c *Client) useInfluxQL(ctx context.Context) bool {
	switch c.batchQL {
	case batchFlux:
		return false
	case batchInfluxQL:
		return true
	}
	c.verMu.Lock()
	defer c.verMu.Unlock()
	if c.version == "" {
		c.version = c.serverVersion(ctx)
	}
	v := strings.TrimPrefix(c.version, "v")
	return strings.HasPrefix(v, "1.") || v == "unknown"
}

// serverVersion is the X-Influxdb-Version header of /ping, "" when the
// server does not answer.
func (c *Client) serverVersion(ctx context.Context) string {
	endpoint, err := url.JoinPath(c.client.ServerURL(), "ping")
	if err != nil {
		return ""
	}
	ctx, cancel := context.WithTimeout(ctx, c.opt.Timeout)
	defer cancel()
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, endpoint, nil)
	if err != nil {
		return ""
	}
	resp, err := c.http.Do(req)
	if err != nil {
		return ""
	}
	defer resp.Body.Close()
	_, _ = io.Copy(io.Discard, resp.Body)
	return resp.Header.Get("X-Influxdb-Version")
}

// influxQLString is s as an InfluxQL string literal (the escapes of the
// influxql package's QuoteString: backslash, single quote, line break).
func influxQLString(s string) string {
	return "'" + strings.NewReplacer("\n", `\n`, `\`, `\\`, `'`, `\'`).Replace(s) + "'"
}

// influxQLIdent is s as a double-quoted InfluxQL identifier (the escapes
// of the influxql package's QuoteIdent).
func influxQLIdent(s string) string {
	return `"` + strings.NewReplacer("\n", `\n`, `\`, `\\`, `"`, `\"`).Replace(s) + `"`
}

// influxQLOneOf is the InfluxQL condition that tag key holds one of
// values: an equality, a regular expression (as fluxRegexOneOf builds it:
// InfluxQL's regular expression literal also has "\/" as its one escape
// and passes any other backslash on), or equalities joined by OR.
func influxQLOneOf(key string, values []string) string {
	return oneOf(influxQLIdent(key)+"::tag", " = ", " OR ", influxQLString, values)
}

// influxQLPlan is the statements of a batch read, one per group, in the
// order of groups.
func (p *batchPlan) influxQL(from, to time.Time) (string, []*batchGroup) {
	var stmts []string
	var groups []*batchGroup
	ms := slices.Sorted(func(yield func(string) bool) {
		for m := range p.groups {
			if !yield(m) {
				return
			}
		}
	})
	for _, m := range ms {
		for _, g := range p.groups[m] {
			fields := make([]string, len(g.fields))
			for i, f := range g.fields {
				fields[i] = influxQLIdent(f) + "::field"
			}
			var b strings.Builder
			fmt.Fprintf(&b, "SELECT %s FROM %s WHERE time >= %d AND time < %d", strings.Join(fields, ", "), influxQLIdent(m),
				from.UnixNano(), to.UnixNano())
			for j, k := range g.keys {
				b.WriteString(" AND ")
				b.WriteString(influxQLOneOf(k, g.values[j]))
			}
			// Every tag: a series per tag set, so that a point matching
			// two series is seen.
			b.WriteString(" GROUP BY *")
			stmts = append(stmts, b.String())
			groups = append(groups, g)
			g.measurement = m
		}
	}
	return strings.Join(stmts, "; "), groups
}

// qlChunk is one chunk of a chunked InfluxQL answer.
type qlChunk struct {
	Results []struct {
		StatementID int        `json:"statement_id"`
		Series      []qlSeries `json:"series"`
		Error       string     `json:"error"`
	} `json:"results"`
	Error string `json:"error"`
}

type qlSeries struct {
	Name    string            `json:"name"`
	Tags    map[string]string `json:"tags"`
	Columns []string          `json:"columns"`
	Values  []qlRow           `json:"values"`
}

// qlRow is one row of values: the time (epoch nanoseconds) and the fields,
// parsed straight from the JSON array.
type qlRow struct {
	t    int64
	v    []float64
	set  []bool
	kind []string // the JSON type of a value that is not a number, for messages
}

func (r *qlRow) UnmarshalJSON(b []byte) error {
	b = bytes.TrimSpace(b)
	if len(b) < 2 || b[0] != '[' || b[len(b)-1] != ']' {
		return fmt.Errorf("influxql answer: row %.40q is not an array", b)
	}
	b = bytes.TrimSpace(b[1 : len(b)-1])
	if len(b) == 0 {
		return errors.New("influxql answer: empty row")
	}
	r.v, r.set, r.kind = r.v[:0], r.set[:0], r.kind[:0]
	for i := 0; len(b) > 0; i++ {
		var item []byte
		if b[0] == '"' {
			// A string value: find its end, skipping escapes.
			j := 1
			for j < len(b) && b[j] != '"' {
				if b[j] == '\\' {
					j++
				}
				j++
			}
			item, b = b[:min(j+1, len(b))], b[min(j+1, len(b)):]
			b = bytes.TrimLeft(b, " ,")
		} else {
			k := bytes.IndexByte(b, ',')
			if k < 0 {
				item, b = b, nil
			} else {
				item, b = b[:k], b[k+1:]
			}
		}
		item = bytes.TrimSpace(item)
		if i == 0 {
			t, err := strconv.ParseInt(string(item), 10, 64)
			if err != nil {
				return fmt.Errorf("influxql answer: time %q is not epoch nanoseconds", item)
			}
			r.t = t
			continue
		}
		v, set, kind := 0.0, true, ""
		switch {
		case string(item) == "null":
			set = false
		case string(item) == "true":
			v = 1
		case string(item) == "false":
			v = 0
		case len(item) > 0 && item[0] == '"':
			kind = "string"
		default:
			f, err := strconv.ParseFloat(string(item), 64)
			if err != nil {
				return fmt.Errorf("influxql answer: value %q is not a number", item)
			}
			v = f
		}
		r.v, r.set, r.kind = append(r.v, v), append(r.set, set), append(r.kind, kind)
	}
	return nil
}

// readBatchInfluxQL is ReadBatch through InfluxQL (see the top of this file).
func (c *Client) readBatchInfluxQL(ctx context.Context, plan *batchPlan, from, to time.Time, fn func(i int, s ingest.Sample) error) error {
	q, groups := plan.influxQL(from, to)
	db, rp, _ := strings.Cut(c.opt.Bucket, "/")
	form := url.Values{"db": {db}, "q": {q}, "epoch": {"ns"}, "chunked": {"true"}, "chunk_size": {"10000"}}
	if rp != "" {
		form.Set("rp", rp)
	}
	body := form.Encode()
	endpoint, err := url.JoinPath(c.client.ServerURL(), "query")
	if err != nil {
		return err
	}
	var (
		last   = make([]time.Time, len(plan.locs))
		series = make([]string, len(plan.locs))
		tags   = make([]string, len(plan.locs))
		key    []byte
		cols   []int // per column after time, the points it feeds (-1: none), flattened
	)
	return c.do(ctx, "query", c.opt.Bucket, func(actx context.Context, kick func()) (bool, error) {
		clear(series)
		clear(last)
		var delivered bool
		var streamErr error
		perr := c.client.HTTPService().DoPostRequest(actx, endpoint, strings.NewReader(body),
			func(req *http.Request) {
				req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
				req.Header.Set("Accept", "application/json")
			},
			func(resp *http.Response) error {
				defer resp.Body.Close()
				kick()
				dec := json.NewDecoder(bufio.NewReaderSize(resp.Body, 1<<16))
				for {
					var ch qlChunk
					if err := dec.Decode(&ch); err != nil {
						if err != io.EOF {
							streamErr = err
						}
						return nil
					}
					kick()
					if ch.Error != "" {
						streamErr = &queryError{msg: ch.Error}
						return nil
					}
					for _, res := range ch.Results {
						if res.Error != "" {
							streamErr = &queryError{msg: res.Error}
							return nil
						}
						if res.StatementID < 0 || res.StatementID >= len(groups) {
							streamErr = fmt.Errorf("influxql answer: statement %d was not asked", res.StatementID)
							return nil
						}
						g := groups[res.StatementID]
						for si := range res.Series {
							s := &res.Series[si]
							if len(s.Columns) == 0 || s.Columns[0] != "time" {
								streamErr = fmt.Errorf("influxql answer: series %q has no time column", s.Name)
								return nil
							}
							id := s.Name + "\x00" + sortedTags(s.Tags)
							// Route each field column to its points.
							cols = cols[:0]
							var starts []int
							for _, f := range s.Columns[1:] {
								starts = append(starts, len(cols))
								key = append(key[:0], f...)
								ok := true
								for _, k := range g.keys {
									v, has := s.Tags[k]
									if !has {
										ok = false
										break
									}
									key = append(key, 0)
									key = append(key, v...)
								}
								if ok {
									cols = append(cols, g.route[string(key)]...)
								}
								cols = append(cols, -1)
							}
							for _, i := range cols {
								if i < 0 {
									continue
								}
								switch series[i] {
								case "":
									series[i], tags[i] = id, "{"+strings.ReplaceAll(sortedTags(s.Tags), "\x00", ", ")+"}"
								case id:
								default:
									streamErr = callerError{fmt.Errorf("point %q matches more than one series, tagged %s and %s; add the tag that tells them apart to its tags: %w",
										plan.locs[i].name, tags[i], "{"+strings.ReplaceAll(sortedTags(s.Tags), "\x00", ", ")+"}", ErrAmbiguousPoint)}
									return nil
								}
							}
							for _, row := range s.Values {
								at := time.Unix(0, row.t).UTC()
								if at.Before(from) || !at.Before(to) {
									continue
								}
								for c, start := range starts {
									if c >= len(row.v) || !row.set[c] {
										continue
									}
									for _, i := range cols[start:] {
										if i < 0 {
											break
										}
										if row.kind[c] != "" {
											streamErr = callerError{fmt.Errorf("point %q at %s: value is a %s, not a number", plan.locs[i].name, fluxTime(at), row.kind[c])}
											return nil
										}
										if at.Before(last[i]) {
											streamErr = callerError{fmt.Errorf("point %q: sample at %s came after one at %s; the server returned the series out of order",
												plan.locs[i].name, fluxTime(at), fluxTime(last[i]))}
											return nil
										}
										last[i] = at
										delivered = true
										if err := fn(i, ingest.Sample{Time: at, Value: plan.toSI[i](row.v[c])}); err != nil {
											streamErr = callerError{err}
											return nil
										}
									}
								}
							}
						}
					}
				}
			})
		if perr != nil {
			return false, perr
		}
		return delivered, streamErr
	})
}

// sortedTags is tags as "k=v" pairs sorted by key, NUL-separated.
func sortedTags(tags map[string]string) string {
	kv := make([]string, 0, len(tags))
	for k, v := range tags {
		kv = append(kv, k+"="+v)
	}
	slices.Sort(kv)
	return strings.Join(kv, "\x00")
}
