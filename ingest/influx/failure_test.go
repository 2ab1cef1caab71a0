package influx

// Failures a healthy test server cannot be made to produce on demand (5xx,
// 429 with Retry-After, a server that echoes credentials, a result that
// stalls half way) are played by httptest servers here. Everything a real
// server can do is tested against one in integration_test.go.

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	ihttp "github.com/influxdata/influxdb-client-go/v2/api/http"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

var (
	fakeRef  = metrics.PointRef{Measurement: "ahu", Field: "supply_temp", Tags: map[string]string{"ahu": "AHU-1"}, Unit: "°C"}
	fakeFrom = time.Date(2024, 7, 15, 14, 0, 0, 0, time.UTC)
	fakeTo   = fakeFrom.Add(time.Hour)
)

// fakeServer serves handler and counts the requests that reach it. It
// returns a client with short waits so that retries run fast.
func fakeServer(t *testing.T, opt Options, handler http.HandlerFunc) (*Client, *atomic.Int32) {
	t.Helper()
	var n atomic.Int32
	srv := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		n.Add(1)
		handler(w, r)
	}))
	t.Cleanup(func() {
		srv.CloseClientConnections() // ends handlers still waiting
		srv.Close()
	})
	opt.URL = srv.URL
	if opt.Bucket == "" {
		opt.Bucket = "dewline/autogen"
	}
	if opt.RetryWait == 0 {
		opt.RetryWait = time.Millisecond
	}
	c, err := New(opt)
	require.NoError(t, err)
	t.Cleanup(c.Close)
	return c, &n
}

// saysTimeout reports what err's Timeout method says, as the agent asks
// it (net.Error's method).
func saysTimeout(err error) bool {
	var t interface{ Timeout() bool }
	return errors.As(err, &t) && t.Timeout()
}

func readFake(c *Client) (int, error) {
	n := 0
	err := c.ReadSeries(context.Background(), fakeRef, psychro.KindTemperature, fakeFrom, fakeTo,
		func(ingest.Sample) error { n++; return nil })
	return n, err
}

func writeFake(c *Client) error {
	return c.WriteSamples(context.Background(), fakeRef, psychro.KindTemperature,
		[]ingest.Sample{{Time: fakeFrom, Value: 12.5}})
}

func jsonError(w http.ResponseWriter, status int, code, msg string) {
	w.Header().Set("Content-Type", "application/json")
	w.WriteHeader(status)
	fmt.Fprintf(w, `{"code":%q,"message":%q}`, code, msg)
}

// oneRowCSV is a result with one sample of fakeRef.
const oneRowCSV = "#datatype,string,long,dateTime:RFC3339,double,string,string,string\n" +
	"#group,false,false,false,false,true,true,true\n" +
	"#default,_result,,,,,,\n" +
	",result,table,_time,_value,_measurement,_field,ahu\n" +
	",,0,2024-07-15T14:00:00Z,12.5,ahu,supply_temp,AHU-1\n"

func TestClient_RetriesServerErrors(t *testing.T) {
	c, n := fakeServer(t, Options{Retries: 2}, func(w http.ResponseWriter, r *http.Request) {
		jsonError(w, http.StatusServiceUnavailable, "unavailable", "storage engine overloaded")
	})
	_, err := readFake(c)
	require.Error(t, err)
	assert.EqualValues(t, 3, n.Load(), "one attempt and two retries")
	assert.ErrorIs(t, err, ErrServer)
	var he *ihttp.Error
	require.True(t, errors.As(err, &he), "errors.As reaches the client's *http.Error")
	assert.Equal(t, http.StatusServiceUnavailable, he.StatusCode)
	assert.Contains(t, err.Error(), "server error after 3 attempts")
	assert.Contains(t, err.Error(), "storage engine overloaded")
	assert.False(t, saysTimeout(err), "an answer, not a timeout")

	n.Store(0)
	require.Error(t, writeFake(c))
	assert.EqualValues(t, 3, n.Load(), "writes are retried too")
}

func TestClient_RetryThenSucceed(t *testing.T) {
	var calls atomic.Int32
	c, n := fakeServer(t, Options{Retries: 3}, func(w http.ResponseWriter, r *http.Request) {
		if calls.Add(1) <= 2 {
			w.WriteHeader(http.StatusBadGateway)
			return
		}
		fmt.Fprint(w, oneRowCSV)
	})
	got, err := readFake(c)
	require.NoError(t, err)
	assert.Equal(t, 1, got)
	assert.EqualValues(t, 3, n.Load())
}

func TestClient_DoesNotRetryClientErrors(t *testing.T) {
	tests := []struct {
		name    string
		status  int
		code    string
		msg     string
		kind    error
		message string
	}{
		{"bad request", http.StatusBadRequest, "invalid", "error @1:1-1:5: unexpected token", ErrRejected, "unexpected token"},
		{"unauthorized", http.StatusUnauthorized, "unauthorized", "unauthorized access", ErrUnauthorized, "check the token"},
		{"forbidden", http.StatusForbidden, "forbidden", "insufficient permissions", ErrUnauthorized, "check the token"},
		{"flux disabled", http.StatusForbidden, "forbidden", "Flux query service disabled. Verify flux-enabled=true in the [http] section of the InfluxDB config.", ErrRejected, "flux-enabled=true"},
		{"bucket missing (2.x)", http.StatusNotFound, "not found", `failed to initialize execute state: could not find bucket "dewline"`, ErrNoSuchBucket, "CREATE DATABASE"},
		// InfluxDB 1.8 reports Flux errors with 500; retrying cannot help.
		{"flux error as 500 (1.8)", http.StatusInternalServerError, "", "loc 1:107-1:156: expected RPAREN, got EOF", ErrRejected, "expected RPAREN"},
		{"no database as 500 (1.8)", http.StatusInternalServerError, "", "failed to initialize execute state: no database", ErrNoSuchBucket, "create it"},
		{"no retention policy as 500 (1.8)", http.StatusInternalServerError, "", "failed to initialize execute state: invalid retention policy", ErrNoSuchBucket, "CREATE RETENTION POLICY"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, n := fakeServer(t, Options{Retries: 3}, func(w http.ResponseWriter, r *http.Request) {
				if tt.code == "" {
					w.WriteHeader(tt.status)
					fmt.Fprint(w, tt.msg)
					return
				}
				jsonError(w, tt.status, tt.code, tt.msg)
			})
			_, err := readFake(c)
			require.Error(t, err)
			assert.EqualValues(t, 1, n.Load(), "not retried")
			assert.ErrorIs(t, err, tt.kind)
			assert.Contains(t, err.Error(), tt.message)
			var re *RequestError
			require.True(t, errors.As(err, &re))
			assert.Equal(t, tt.status, re.StatusCode)
			assert.Equal(t, 1, re.Attempts)
		})
	}
}

func TestClient_HonoursRetryAfter(t *testing.T) {
	var mu sync.Mutex
	var at []time.Time
	c, _ := fakeServer(t, Options{Retries: 1}, func(w http.ResponseWriter, r *http.Request) {
		mu.Lock()
		at = append(at, time.Now())
		first := len(at) == 1
		mu.Unlock()
		if first {
			w.Header().Set("Retry-After", "1")
			w.WriteHeader(http.StatusTooManyRequests)
			return
		}
		fmt.Fprint(w, oneRowCSV)
	})
	_, err := readFake(c)
	require.NoError(t, err)
	require.Len(t, at, 2)
	// RetryWait is 1ms; only Retry-After makes the client wait a second.
	assert.GreaterOrEqual(t, at[1].Sub(at[0]), 900*time.Millisecond)
}

// TestClient_TokenNeverInErrors runs against a server that echoes the
// Authorization header back in every kind of error.
func TestClient_TokenNeverInErrors(t *testing.T) {
	const token = "Zx9-very-secret-token-81f3"
	tests := []struct {
		name    string
		respond func(w http.ResponseWriter, auth string)
		call    func(c *Client) error
	}{
		{"400 text", func(w http.ResponseWriter, auth string) {
			w.WriteHeader(http.StatusBadRequest)
			fmt.Fprintf(w, "bad header %s", auth)
		}, func(c *Client) error { _, err := readFake(c); return err }},
		{"401 json", func(w http.ResponseWriter, auth string) {
			jsonError(w, http.StatusUnauthorized, "unauthorized", "token "+auth+" unknown")
		}, func(c *Client) error { _, err := readFake(c); return err }},
		{"503 json on write", func(w http.ResponseWriter, auth string) {
			jsonError(w, http.StatusServiceUnavailable, "unavailable", "busy for "+auth)
		}, writeFake},
		{"error table", func(w http.ResponseWriter, auth string) {
			fmt.Fprintf(w, "#datatype,string,string\n#group,true,true\n#default,,\n,error,reference\n,%q,\n", "who is "+auth)
		}, func(c *Client) error { _, err := readFake(c); return err }},
		{"ping 500", func(w http.ResponseWriter, auth string) {
			w.WriteHeader(http.StatusInternalServerError)
			fmt.Fprint(w, auth)
		}, func(c *Client) error { return c.Ping(context.Background()) }},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, _ := fakeServer(t, Options{Token: token, Retries: 1}, func(w http.ResponseWriter, r *http.Request) {
				tt.respond(w, r.Header.Get("Authorization"))
			})
			err := tt.call(c)
			require.Error(t, err)
			assert.NotContains(t, err.Error(), token)
			assert.Contains(t, err.Error(), "[redacted]", "the server did echo the token")
			var he *ihttp.Error
			if errors.As(err, &he) {
				assert.NotContains(t, he.Message, token)
				assert.NotContains(t, he.Error(), token)
			}
		})
	}
}

func TestClient_CancelStopsRetrying(t *testing.T) {
	c, _ := fakeServer(t, Options{Retries: 5, RetryWait: 10 * time.Second}, func(w http.ResponseWriter, r *http.Request) {
		w.WriteHeader(http.StatusServiceUnavailable)
	})
	ctx, cancel := context.WithCancel(context.Background())
	time.AfterFunc(100*time.Millisecond, cancel)
	start := time.Now()
	err := c.ReadSeries(ctx, fakeRef, psychro.KindTemperature, fakeFrom, fakeTo, func(ingest.Sample) error { return nil })
	require.Error(t, err)
	assert.ErrorIs(t, err, context.Canceled)
	assert.ErrorIs(t, err, ErrServer, "the last failure is kept")
	assert.Less(t, time.Since(start), 5*time.Second, "the 10s backoff was cut short")
}

// hang blocks a handler until the client gives up or the test ends. It
// reads the request body first: the server notices a client hanging up
// only once the body is consumed.
func hang(t *testing.T) func(r *http.Request) {
	done := make(chan struct{})
	t.Cleanup(func() { close(done) })
	return func(r *http.Request) {
		_, _ = io.Copy(io.Discard, r.Body)
		select {
		case <-r.Context().Done():
		case <-done:
		}
	}
}

func TestClient_HungServerTimesOut(t *testing.T) {
	wait := hang(t)
	c, n := fakeServer(t, Options{Timeout: 200 * time.Millisecond, Retries: 2, RetryWait: 10 * time.Millisecond},
		func(w http.ResponseWriter, r *http.Request) { wait(r) })
	start := time.Now()
	_, err := readFake(c)
	elapsed := time.Since(start)
	require.Error(t, err)
	assert.ErrorIs(t, err, ErrTimeout)
	assert.Contains(t, err.Error(), "timed out after 3 attempts (timeout 200ms each)")
	assert.True(t, saysTimeout(err), "the agent stops its run's reads on it")
	assert.EqualValues(t, 3, n.Load())
	assert.GreaterOrEqual(t, elapsed, 600*time.Millisecond, "three full timeouts")
	assert.Less(t, elapsed, 10*time.Second, "bounded, not hanging")

	n.Store(0)
	err = c.Ping(context.Background())
	assert.ErrorIs(t, err, ErrTimeout)
	assert.EqualValues(t, 3, n.Load())
}

// A result that stops half way is cut off by the same timeout. Once
// samples have reached the caller it is not retried (they would come
// twice); before that it is.
func TestClient_StalledResult(t *testing.T) {
	header := strings.Join(strings.SplitAfter(oneRowCSV, "\n")[:4], "")
	tests := []struct {
		name     string
		send     string
		requests int32
		samples  int
		message  string
	}{
		{"after a row", oneRowCSV, 1, 1, "not retried: part of the result had already been read"},
		{"before any row", header, 3, 0, "timed out after 3 attempts"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			wait := hang(t)
			c, n := fakeServer(t, Options{Timeout: 200 * time.Millisecond, Retries: 2},
				func(w http.ResponseWriter, r *http.Request) {
					fmt.Fprint(w, tt.send)
					w.(http.Flusher).Flush()
					wait(r)
				})
			got, err := readFake(c)
			require.Error(t, err)
			assert.ErrorIs(t, err, ErrTimeout)
			assert.Contains(t, err.Error(), tt.message)
			assert.Equal(t, tt.requests, n.Load())
			assert.Equal(t, tt.samples, got)
		})
	}
}

// A result that keeps coming, only slowly, is not cut off: the timeout
// counts from the last row, not from the request.
func TestClient_SlowSteadyResult(t *testing.T) {
	header := strings.Join(strings.SplitAfter(oneRowCSV, "\n")[:4], "")
	c, n := fakeServer(t, Options{Timeout: 300 * time.Millisecond, Retries: 2},
		func(w http.ResponseWriter, r *http.Request) {
			fmt.Fprint(w, header)
			for k := 0; k < 8; k++ { // 8 rows 100ms apart: 800ms in all
				time.Sleep(100 * time.Millisecond)
				fmt.Fprintf(w, ",,0,2024-07-15T14:%02d:00Z,12.5,ahu,supply_temp,AHU-1\n", k)
				w.(http.Flusher).Flush()
			}
		})
	got, err := readFake(c)
	require.NoError(t, err)
	assert.Equal(t, 8, got)
	assert.EqualValues(t, 1, n.Load())
}
