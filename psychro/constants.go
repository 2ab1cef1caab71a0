package psychro

// Physical constants and limits, SI.
const (
	// StandardPressurePa is the standard atmosphere at sea level (ASHRAE ch. 1, Table 1).
	StandardPressurePa = 101325.0
	// StandardAirDensity is the density of standard air, dry air at 20 °C and
	// 101.325 kPa, in kg/m³ (ASHRAE ch. 1; 0.075 lb/ft³ in IP).
	StandardAirDensity = 1.204
	// RDryAir is the gas constant of dry air in J/(kg·K) (ASHRAE ch. 1, eq. 26 uses 0.287042 kJ).
	RDryAir = 287.042
	// MolarMassRatio is M_water / M_dry_air (ASHRAE ch. 1, eq. 20).
	MolarMassRatio = 0.621945
	// CpDryAir is the specific heat of dry air in kJ/(kg·K) (eq. 32).
	CpDryAir = 1.006
	// CpVapour is the specific heat of water vapour in kJ/(kg·K) (eq. 32).
	CpVapour = 1.86
	// HgZero is the enthalpy of saturated water vapour at 0 °C in kJ/kg (eq. 32).
	HgZero = 2501.0
	// CpLiquidWater is the specific heat of liquid water in kJ/(kg·K) (condensate enthalpy).
	CpLiquidWater = 4.186
	// CpIce is the specific heat of ice in kJ/(kg·K) (eq. 35).
	CpIce = 2.1
	// HeatOfFusion is the latent heat of fusion of water at 0 °C in kJ/kg (eq. 35, 2830 - 2501 - ...).
	HeatOfFusion = 333.4
	// ZeroCelsiusK is 0 °C in kelvin.
	ZeroCelsiusK = 273.15
	// TriplePointC is the triple point of water, where eqs. 5 and 6 meet.
	TriplePointC = 0.01

	// MinTempC and MaxTempC bound the Hyland-Wexler correlations (eqs. 5 and 6).
	MinTempC = -100.0
	MaxTempC = 200.0
	// MaxPressurePa bounds total pressure for the ideal-gas relations.
	MaxPressurePa = 10e6
	// MinAltitudeM and MaxAltitudeM bound the standard-atmosphere formula used
	// here (eq. 3 holds in the troposphere, Table 1 spans -500..11 000 m).
	MinAltitudeM = -5000.0
	MaxAltitudeM = 11000.0
)
