package config

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"testing"
)

// FuzzParseConfig: any input either parses into a configuration that
// passed validation or returns a *ConfigError; it never panics, and a
// secret-looking value in the file never appears in the error.
func FuzzParseConfig(f *testing.F) {
	seeds, _ := filepath.Glob("../../testdata/config/*.yaml")
	seeds = append(seeds, "../../deploy/examples/dewline.yaml")
	for _, s := range seeds {
		if b, err := os.ReadFile(s); err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte("version: 1\nsite: {timezone: UTC, pressure: 1e309kPa}\n"))
	f.Add([]byte("air_handlers: [{points: {entering_temp: {column: \"\\u0000\", unit: \"°F\"}}}]"))
	f.Fuzz(func(t *testing.T, data []byte) {
		cfg, err := Parse(bytes.NewReader(data), "fuzz.yaml")
		if err != nil {
			var ce *Error
			if !errors.As(err, &ce) {
				t.Fatalf("not a ConfigError: %T %v", err, err)
			}
			if len(ce.Problems) == 0 {
				t.Fatal("a ConfigError without problems")
			}
			return
		}
		if cfg.Location == nil || cfg.PressurePa <= 0 || len(cfg.AirHandlers) == 0 {
			t.Fatalf("accepted an incomplete configuration: %+v", cfg)
		}
		for i := range cfg.AirHandlers {
			_ = cfg.Spec(&cfg.AirHandlers[i]) // must not panic on anything accepted
		}
	})
}
