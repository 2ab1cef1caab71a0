package influx

import (
	"errors"
	"testing"

	"github.com/stretchr/testify/assert"
)

func TestBackend_IsOutage(t *testing.T) {
	var b Backend
	assert.True(t, b.IsOutage(errors.New("disk I/O error")))
	assert.True(t, b.IsOutage(ErrTimeout))
	assert.False(t, b.IsOutage(ErrAmbiguousPoint), "one air handler's point, not the store")
	assert.False(t, b.IsOutage(ErrNoSuchPoint))
}
