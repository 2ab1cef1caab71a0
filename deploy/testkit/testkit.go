// Package testkit holds what dewline's tests share: the rule for a service
// a test needs (InfluxDB, npm psychrolib, Chromium, which deploy/dev/test.sh
// starts or installs), and small helpers. It is imported by tests only.
package testkit

import (
	"bytes"
	"os"
	"sync"
	"testing"
)

// InCI reports whether the tests run under CI (CI=true), where a missing
// service is a failure rather than a skip.
func InCI() bool { return os.Getenv("CI") == "true" }

// Need ends the test when a service it needs is missing: under CI=true it
// fails, elsewhere it skips; the message says what is missing and how to
// provide it.
func Need(t testing.TB, missing string) {
	t.Helper()
	if InCI() {
		t.Fatalf("%s (required under CI; deploy/dev/test.sh provides it)", missing)
	}
	t.Skipf("%s; run deploy/dev/test.sh to provide it", missing)
}

// SyncBuffer is a log sink safe for concurrent writers.
type SyncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *SyncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *SyncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}
