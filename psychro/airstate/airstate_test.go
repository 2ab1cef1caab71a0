package airstate

import (
	"errors"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// A mistake in what was typed is an *InputError (the command's usage
// mistake); a state the formulas cannot reach is another error.
func TestResolve_ErrorKinds(t *testing.T) {
	tests := []struct {
		name  string
		in    Inputs
		input bool
	}{
		{"no dry bulb", Inputs{RH: "50", Units: "auto"}, true},
		{"unknown units", Inputs{DryBulb: "24C", RH: "50", Units: "kelvin"}, true},
		{"two humidities", Inputs{DryBulb: "24C", RH: "50", DewPoint: "10C", Units: "auto"}, true},
		{"altitude and pressure", Inputs{DryBulb: "24C", RH: "50", Altitude: "100m", Pressure: "100kPa", Units: "auto"}, true},
		{"rh over 100", Inputs{DryBulb: "24C", RH: "120", Units: "auto"}, true},
		{"wet bulb above dry bulb", Inputs{DryBulb: "20C", WetBulb: "25C", Units: "auto"}, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, err := Resolve(tt.in)
			require.Error(t, err)
			var ie *InputError
			assert.Equal(t, tt.input, errors.As(err, &ie), "%v", err)
		})
	}
}

// An RH typed as a fraction is read as a percentage, with a warning that
// says so; the display follows the unit of the dry bulb under auto.
func TestResolve_FractionWarningAndDisplay(t *testing.T) {
	air, err := Resolve(Inputs{DryBulb: "75F", RH: "0.5", Units: "auto"})
	require.NoError(t, err)
	assert.InDelta(t, 0.005, air.State.RH, 1e-12, "0.5 is read as 0.5 %")
	assert.Contains(t, air.Warning, "for 50 % give --rh 50")
	assert.True(t, air.IP)

	air, err = Resolve(Inputs{DryBulb: "24C", RH: "50", Units: "auto"})
	require.NoError(t, err)
	assert.Empty(t, air.Warning)
	assert.False(t, air.IP)
}

// Six significant digits: 80 °F is 26.666... °C by definition.
func TestSig6(t *testing.T) {
	assert.Equal(t, 26.6667, sig6((80-32)/1.8))
	assert.Equal(t, 0.0123457, sig6(0.01234567))
	assert.Equal(t, 0.0, sig6(0))
}
