package metrics

import "math"

// CoolingKind is the cooling source of an air handler.
type CoolingKind int

// Cooling sources.
const (
	CoolingDX           CoolingKind = iota + 1 // direct expansion; compressor kW metered or from a rated EER
	CoolingChilledWater                        // chilled-water coil; plant kW from kW per ton
)

// ReheatKind is the reheat source of an air handler.
type ReheatKind int

// Reheat sources.
const (
	ReheatNone      ReheatKind = iota + 1 // no reheat coil
	ReheatElectric                        // resistance heat, COP 1
	ReheatHotWater                        // boiler hot water: fuel = heat / boiler efficiency
	ReheatRecovered                       // site-recovered heat (hot gas, heat pipe, condenser): no purchased energy
)

// Basis is how an airflow reading turns into dry-air mass flow.
type Basis int

// Airflow bases.
const (
	BasisStandard Basis = iota + 1 // standard air: m_da = 1.204 kg/m³ × Q
	BasisActual                    // volume at the sensor's state: m_da = Q / v
)

// FanPosition is where the supply fan sits relative to the coil and the supply sensor.
type FanPosition int

// Fan positions.
const (
	FanNone        FanPosition = iota + 1
	FanBlowThrough             // between the entering sensor and the coil: its heat (fan_kw or FanRiseK) is added to the coil's entering air and load
	FanDrawThrough             // between coil and supply sensor: its heat is not reheat
	// FanBlowThroughMeasured is a blow-through fan ahead of the entering
	// sensor: the sensor's reading holds the fan's heat already.
	FanBlowThroughMeasured
)

// TargetKind is the form of the humidity target.
type TargetKind int

// Humidity target forms.
const (
	TargetSupplyDewPoint TargetKind = iota + 1 // supply dew point at or below DewPointC
	TargetSpaceDewPoint                        // space dew point at or below DewPointC
	TargetSpaceRH                              // space RH at or below RH at the space temperature
)

// Target is an air handler's humidity target.
type Target struct {
	Kind       TargetKind
	DewPointC  float64 // supply or space dew point limit
	RH         float64 // space RH limit, fraction
	SpaceTempC float64 // space temperature when none is trended (TargetSpaceRH)
}

// Prices turn energy into money and CO2.
type Prices struct {
	ElectricityPerKWh      float64
	FuelPerKWh             float64
	ElectricityCO2KgPerKWh float64
	FuelCO2KgPerKWh        float64
}

// Accuracy holds sensor accuracies, read as 95 % half-widths of a bias
// that is the same through an hour (calibration error, not noise).
type Accuracy struct {
	TempK     float64 // dry-bulb sensors, K
	RH        float64 // RH sensors, fraction (0.03 = 3 % RH)
	DewPointK float64 // dew-point sensors, K
	FlowFrac  float64 // airflow, fraction of reading
	PowerFrac float64 // kW meters, fraction of reading
}

// DefaultAccuracy is typical of building-automation sensors: ±0.3 K, ±3 %
// RH, ±0.5 K dew point, ±7 % airflow, ±2 % power (memory, typical
// catalogue figures; override with site knowledge).
var DefaultAccuracy = Accuracy{TempK: 0.3, RH: 0.03, DewPointK: 0.5, FlowFrac: 0.07, PowerFrac: 0.02}

// Thresholds decide when a coil or reheat coil counts as running.
type Thresholds struct {
	CoilDeadbandK   float64 // coil counts as cooling when entering - leaving exceeds this, default 0.5 K
	ReheatDeadbandK float64 // reheat counts when supply - leaving - fan rise exceeds this, default 0.5 K
	MinCoverage     float64 // hours below this coverage are flagged, default 0.9
}

// DefaultThresholds are dewline's defaults (common practice, no source:
// about the combined accuracy of two temperature sensors).
var DefaultThresholds = Thresholds{CoilDeadbandK: 0.5, ReheatDeadbandK: 0.5, MinCoverage: 0.9}

// AirHandler is everything the engine needs to know about one air handler.
type AirHandler struct {
	ID         string
	PressurePa float64

	Cooling       CoolingKind
	RatedCOP      float64 // DX model: COP at the rating outdoor temperature
	RatedOutdoorC float64
	COPPerK       float64 // change of COP per K of outdoor temperature above the rating (negative)
	// RatedCapacityKW is the DX unit's rated total cooling capacity; with
	// it a modelled cooling input carries the part-load cycling loss
	// (partLoadFactor). 0: unknown, cycling not modelled.
	RatedCapacityKW float64
	DegradationCd   float64 // cycling degradation coefficient Cd (DefaultDegradationCd)
	PlantKWPerKW    float64 // chilled water: plant kW per kW of coil load (kW/ton ÷ 3.517)
	Reheat          ReheatKind
	BoilerEff       float64
	Basis           Basis
	FlowAt          Role // where the airflow sensor sits for BasisActual: RoleSupplyTemp (default), RoleEnteringTemp or RoleLeavingTemp
	Fan             FanPosition
	FanRiseK        float64 // used when no fan_kw is trended and no rated power is given
	FanRatedKW      float64 // the fan's rated power, used when no fan_kw is trended (0: none)
	LeavingRH       float64 // assumed coil leaving RH when not measured, fraction
	LeavingRHU      float64 // 95 % half-width of the assumed leaving RH, fraction (DefaultLeavingRHU)
	MinOutdoor      float64 // outdoor-air share at minimum position, for mixing when temperatures are too close (0: unknown)
	SpaceGain       float64 // moisture the space adds to the supply air, kg/kg, when no space sensors show it (DefaultSpaceGain)
	Target          Target
	Prices          Prices
	Accuracy        Accuracy
	Thresholds      Thresholds
}

// DefaultSpaceGain is the moisture a space adds to its supply air when no
// space humidity sensor shows it: 0.8 g/kg, about the latent gain of an
// office at design occupancy on a typical supply flow (common practice, no
// source; override with air_handlers[].space_moisture_gain). Assuming no
// gain overstates the avoidable reheat of a space target.
const DefaultSpaceGain = 0.0008

// DefaultLeavingRHU is the 95 % half-width of an assumed coil leaving RH:
// air leaves a wet coil at typically 90-95 % RH (common practice,
// no source), so 95 % ± 5 % spans what an unmeasured coil may do. 5 % RH
// moves the water removed by about 40 %.
const DefaultLeavingRHU = 0.05

// SpaceGainRelU is the 95 % half-width of an assumed space moisture gain
// as a share of the gain: occupancy and infiltration easily differ by half
// from a design figure (common practice, no source).
const SpaceGainRelU = 0.5

// Outdoor-air share uncertainty when the temperatures cannot tell it (95 %
// half-widths, absolute share): the hour's mean from the steps that did,
// or a configured minimum position, which drifts with damper linkage and
// wind (common practice, no source).
const (
	ShareHourU = 0.05
	ShareMinU  = 0.1
)

// DefaultDegradationCd is the cycling degradation coefficient of the
// part-load factor PLF = 1 - Cd (1 - PLR) of AHRI Standard 210/240
// (unitary air-conditioning and air-source heat pump equipment), the value
// the standard assigns when the cyclic test is not run (memory: 0.25 in
// the editions up to 2008; later editions use a lower default; verify
// against the edition the unit was rated to and configure
// cooling.degradation_coefficient).
const DefaultDegradationCd = 0.25

// partLoadFactor is PLF = 1 - Cd (1 - PLR) of AHRI Standard 210/240, PLR
// = load / rated capacity, held within 0..1: a DX unit cycling at part
// load draws load / (COP × PLF), the extra being the losses of each start
// (refrigerant redistribution, the coil cooling down again). 1 without a
// rated capacity.
func (u *AirHandler) partLoadFactor(loadKW float64) float64 {
	if u.RatedCapacityKW <= 0 || loadKW <= 0 {
		return 1
	}
	plr := math.Min(1, loadKW/u.RatedCapacityKW)
	return 1 - u.DegradationCd*(1-plr)
}

// modelledCoolIn is the DX model's electric input for a coil load, kW:
// load / (COP(t_out) × PLF), cop being copAt(t_out).
func (u *AirHandler) modelledCoolIn(loadKW, cop float64) float64 {
	return loadKW / (cop * u.partLoadFactor(loadKW))
}

// copAt returns the DX model's COP at outdoor temperature tOutC (NaN: the
// rated COP). The correction is linear and held between 40 % and 160 % of
// the rated COP, a guard against extrapolating a nameplate too far.
func (u *AirHandler) copAt(tOutC float64) float64 {
	if math.IsNaN(tOutC) {
		return u.RatedCOP
	}
	c := u.RatedCOP + u.COPPerK*(tOutC-u.RatedOutdoorC)
	return math.Max(0.4*u.RatedCOP, math.Min(1.6*u.RatedCOP, c))
}
