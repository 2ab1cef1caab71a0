package metrics

import (
	"testing"

	"github.com/stretchr/testify/assert"
)

func TestAdditiveFields_AreFields(t *testing.T) {
	var r Record
	ptrs := r.FieldPtrs()
	for _, name := range AdditiveFields() {
		_, ok := ptrs[name]
		assert.True(t, ok, "additive field %q is not a record field", name)
	}
	// Ratios and means must not be summed over hours.
	for _, name := range []string{"effective_eer", "coil_eer", "shr", "reheat_coil_ratio", "leaving_temp_c", "overcooling_k", "water_per_kwh_l"} {
		assert.NotContains(t, AdditiveFields(), name)
	}
}
