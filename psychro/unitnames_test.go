package psychro

import (
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

// Conversion factors checked against their definitions (NIST SP 811,
// Appendix B; recalled from memory): 1 ft = 0.3048 m, 1 lb = 0.45359237 kg,
// 1 psi = 6894.757 Pa, 1 inHg (32 °F) = 3386.38 Pa, 1 Btu_IT = 1055.056 J,
// 1 ton of refrigeration = 3.516853 kW, 1 CFM = 0.471947 L/s.
func TestParseQuantity(t *testing.T) {
	tests := []struct {
		name string
		in   string
		kind Kind
		def  string
		want float64
		tol  float64
	}{
		{"fahrenheit", "75F", KindTemperature, "", 23.888889, 1e-6},
		{"degree sign", "75 °F", KindTemperature, "", 23.888889, 1e-6},
		{"celsius", "24C", KindTemperature, "", 24, 0},
		{"kelvin", "297.15K", KindTemperature, "", 24, 1e-9},
		{"negative", "-40F", KindTemperature, "", -40, 1e-9},
		{"default unit", "75", KindTemperature, "F", 23.888889, 1e-6},
		{"kpa", "98.2kPa", KindPressure, "", 98200, 1e-9},
		{"psi", "14.696psi", KindPressure, "", 101325, 1},
		{"inhg", "29.921inHg", KindPressure, "", 101325, 3},
		{"metres", "300m", KindLength, "", 300, 0},
		{"feet", "1000ft", KindLength, "", 304.8, 1e-9},
		{"percent", "50%", KindRH, "", 0.5, 0},
		{"bare rh", "50", KindRH, "%", 0.5, 0},
		{"cfm", "1000CFM", KindFlow, "", 0.4719474, 1e-6},
		{"litres", "471.947l/s", KindFlow, "", 0.471947, 1e-9},
		{"m3h", "3600m3/h", KindFlow, "", 1, 1e-12},
		{"ton", "1ton", KindPower, "", 3.516853, 1e-6},
		{"btuh", "3412.14Btu/h", KindPower, "", 1, 1e-4},
		{"exponent", "1.5e3W", KindPower, "", 1.5, 1e-12},
		{"therm", "1therm", KindEnergy, "", 29.30711, 1e-4},
		{"grains", "70gr/lb", KindHumRatio, "", 0.01, 1e-12},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, _, err := ParseQuantity(tt.in, tt.kind, tt.def)
			require.NoError(t, err)
			assert.InDelta(t, tt.want, got, tt.tol)
		})
	}
}

func TestParseQuantity_Errors(t *testing.T) {
	tests := []struct {
		name, in string
		kind     Kind
		wantErr  string
	}{
		{"no unit", "75", KindTemperature, "has no unit"},
		{"wrong kind", "75kPa", KindTemperature, "unknown temperature unit"},
		{"not a number", "warm", KindTemperature, "not a number"},
		{"nan", "NaN", KindTemperature, "not a number"},
		{"empty", "", KindPressure, "not a number"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			_, _, err := ParseQuantity(tt.in, tt.kind, "")
			require.Error(t, err)
			assert.Contains(t, err.Error(), tt.wantErr)
		})
	}
}

func TestUnit_RoundTrip(t *testing.T) {
	for _, e := range unitTable {
		v := 12.5
		assert.InDelta(t, v, e.u.FromSI(e.u.ToSI(v)), 1e-9, e.u.Name)
	}
}

// TestUnit_DecimalMultipleOf: W, MW and kW differ by SI prefixes (powers
// of ten, SI Brochure, 9th ed., 2019), as % and a fraction do; Btu/h and
// ton are not decimal multiples of kW, and temperature scales have an
// offset.
func TestUnit_DecimalMultipleOf(t *testing.T) {
	u := func(k Kind, name string) Unit {
		x, err := LookupUnit(k, name)
		require.NoError(t, err)
		return x
	}
	kW := u(KindPower, "kW")
	assert.True(t, u(KindPower, "W").DecimalMultipleOf(kW))
	assert.True(t, u(KindPower, "MW").DecimalMultipleOf(kW))
	assert.True(t, kW.DecimalMultipleOf(kW))
	assert.False(t, u(KindPower, "Btu/h").DecimalMultipleOf(kW))
	assert.False(t, u(KindPower, "ton").DecimalMultipleOf(kW))
	assert.True(t, u(KindRH, "fraction").DecimalMultipleOf(u(KindRH, "%")))
	assert.False(t, u(KindTemperature, "°F").DecimalMultipleOf(u(KindTemperature, "°C")))
	assert.False(t, u(KindTemperature, "K").DecimalMultipleOf(u(KindTemperature, "°C")), "an offset, not a factor")
}
