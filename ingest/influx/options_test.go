package influx

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestNew_Validation(t *testing.T) {
	tests := []struct {
		name string
		opt  Options
		want []string // substrings of the error, each a separate problem
	}{
		{"empty", Options{}, []string{"url is empty", "bucket is empty"}},
		{"no scheme", Options{URL: "localhost:8086", Bucket: "b"}, []string{"use http:// or https://"}},
		{"ftp", Options{URL: "ftp://h:8086", Bucket: "b"}, []string{`scheme "ftp"`}},
		{"no host", Options{URL: "http://", Bucket: "b"}, []string{"has no host"}},
		{"query", Options{URL: "http://h:8086?x=1", Bucket: "b"}, []string{"query or fragment"}},
		{"bad port", Options{URL: "http://h:port", Bucket: "b"}, []string{"does not parse"}},
		{"credentials", Options{URL: "http://admin:s3cret-pass@h:8086", Bucket: "b"}, []string{"carries credentials; remove them from the url and set the token"}},
		{"negative durations and size", Options{URL: "http://h", Bucket: "b", Timeout: -time.Second, RetryWait: -1, BatchSize: -1},
			[]string{"timeout -1s is negative", "retry wait -1ns is negative", "batch size -1 is negative"}},
		{"blank bucket", Options{URL: "http://h", Bucket: "  "}, []string{`"database/retention policy"`}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			c, err := New(tt.opt)
			require.Error(t, err)
			assert.Nil(t, c)
			var oe *OptionsError
			require.True(t, errors.As(err, &oe), "want *OptionsError, got %T", err)
			assert.Len(t, oe.Problems, len(tt.want), "one problem each: %v", oe.Problems)
			for _, w := range tt.want {
				assert.Contains(t, err.Error(), w)
			}
			assert.NotContains(t, err.Error(), "s3cret-pass")
		})
	}
}

func TestNew_Defaults(t *testing.T) {
	c, err := New(Options{URL: "http://localhost:8086", Bucket: "db/rp"})
	require.NoError(t, err)
	defer c.Close()
	o := c.Options()
	assert.Equal(t, 30*time.Second, o.Timeout)
	assert.Equal(t, 3, o.Retries)
	assert.Equal(t, 500*time.Millisecond, o.RetryWait)
	assert.Equal(t, 5000, o.BatchSize)

	c2, err := New(Options{URL: "http://localhost:8086", Bucket: "db/rp", Retries: -1})
	require.NoError(t, err)
	defer c2.Close()
	assert.Equal(t, 0, c2.Options().Retries, "negative means no retries")
	c2.Close() // twice is fine
}

// TestOptions_RedactsToken prints Options every way a caller might and looks
// for the token in the output.
func TestOptions_RedactsToken(t *testing.T) {
	for _, token := range []string{"tok-9f8e7d6c5b4a", "admin:pa55-w0rd"} {
		opt := Options{URL: "http://influx.example:8086", Org: "plant", Bucket: "bms", Token: token}
		var logged bytes.Buffer
		slog.New(slog.NewJSONHandler(&logged, nil)).Info("connect", "influx", opt)
		js, err := json.Marshal(opt)
		require.NoError(t, err)
		outputs := map[string]string{
			"%v":      fmt.Sprintf("%v", opt),
			"%+v":     fmt.Sprintf("%+v", opt),
			"%#v":     fmt.Sprintf("%#v", opt),
			"%s":      fmt.Sprintf("%s", opt), //lint:ignore S1025 the test checks what %s prints
			"pointer": fmt.Sprintf("%+v", &opt),
			"nested":  fmt.Sprintf("%+v", struct{ Store Options }{opt}),
			"json":    string(js),
			"slog":    logged.String(),
		}
		for how, out := range outputs {
			assert.NotContains(t, out, token, how)
			assert.NotContains(t, out, "pa55-w0rd", how)
			assert.Contains(t, out, "redacted", how)
			assert.Contains(t, out, "influx.example", how)
		}
	}
	// No token: nothing to hide, and it shows that there is none.
	assert.Contains(t, Options{URL: "http://h", Bucket: "b"}.String(), `Token: ""`)
}

func TestIsLoopback(t *testing.T) {
	for host, want := range map[string]bool{
		"localhost": true, "127.0.0.1": true, "::1": true, "127.3.4.5": true,
		"influx.example": false, "10.0.0.5": false, "": false,
	} {
		assert.Equal(t, want, isLoopback(host), host)
	}
}
