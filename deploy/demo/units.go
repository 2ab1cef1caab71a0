package demo

import (
	"time"
)

// sig names a simulated reading.
type sig int

const (
	sigEnterT sig = iota
	sigEnterRH
	sigEnterDP
	sigLeaveT
	sigLeaveRH
	sigSupplyT
	sigFlow
	sigCoolKW
	sigReheatKW
	sigFanKW
	sigSpaceT
	sigSpaceRH
	sigCoolValve
	sigReheatValve
	sigOccCmd
	sigFanStatus
	nSig
)

// logMode is how a controller logs a point.
type logMode int

const (
	logCOV      logMode = iota + 1 // on a change beyond the deadband, and every heartbeat
	logInterval                    // every intervalMin minutes, on the minute
	logBinary                      // On/Off, on a change and every heartbeat
)

const (
	heartbeatMin = 15 // a change-of-value point logs at least this often
	intervalMin  = 5  // interval points
)

// pointDef is one trended point of a controller.
type pointDef struct {
	role     string // role in the configuration; "" for a point it does not map
	name     string // series name in the export
	fileUnit string // unit as the export writes it
	cfgUnit  string // unit as the configuration declares it
	sig      sig
	mode     logMode
	deadband float64 // COV, in the logged unit
	decimals int
	offset   int // second within the minute at which it is logged
}

func temp(role, name string, s sig, off int) pointDef {
	return pointDef{role: role, name: name, fileUnit: "°F", cfgUnit: "F", sig: s, mode: logCOV, deadband: 0.3, decimals: 1, offset: off}
}

func rhPt(role, name string, s sig, off int) pointDef {
	return pointDef{role: role, name: name, fileUnit: "%RH", cfgUnit: "%", sig: s, mode: logCOV, deadband: 1.0, decimals: 1, offset: off}
}

func interval(role, name, fileUnit, cfgUnit string, s sig, dec int) pointDef {
	return pointDef{role: role, name: name, fileUnit: fileUnit, cfgUnit: cfgUnit, sig: s, mode: logInterval, decimals: dec}
}

func binary(name string, s sig, off int) pointDef {
	return pointDef{name: name, sig: s, mode: logBinary, offset: off}
}

// control is an air handler's sequence.
type control int

const (
	ctrlDewPointReset control = iota + 1 // coil reset to the dew-point need, reheat as needed
	ctrlColdCoil                         // coil fixed cold, reheat to a fixed supply temperature
	ctrlScheduleFault                    // runs unoccupied with coil and reheat on
	ctrlOutdoorReset                     // 100 % outdoor air, coil reset on outdoor dew point
	ctrlHotGas                           // dehumidification mode on space RH, hot-gas reheat
)

// schedule holds the occupied hours of each weekday (Sunday first):
// from, to in local hours; equal values mean closed all day.
type schedule [7][2]float64

// occupancy is the share of the occupants present, ramping over half an
// hour at either end of the occupied hours.
func (s schedule) occupancy(wd time.Weekday, h float64) float64 {
	on, off := s[wd][0], s[wd][1]
	if off <= on || h < on || h >= off {
		return 0
	}
	return min(1, (h-on)/0.5, (off-h)/0.5)
}

func (s schedule) occupied(wd time.Weekday, h float64) bool {
	on, off := s[wd][0], s[wd][1]
	return off > on && h >= on && h < off
}

// airHandlerDef is an air handler: equipment, zone, controls and points.
type airHandlerDef struct {
	AirHandler
	ctrl   control
	file   string
	wide   bool // wide 5-minute export with month-first dates
	gz     bool
	header [4]string

	cfm         float64 // supply airflow: standard CFM, or actual CFM at supply when actual
	actual      bool
	oaOcc       float64 // outdoor-air fraction, occupied
	oaUnocc     float64 // outdoor-air fraction when running unoccupied
	blowThrough bool    // fan before the coil; its heat is in the coil entering air
	fanRiseK    float64 // design fan temperature rise
	hours       schedule
	alwaysOn    bool // the fan runs around the clock (by design or by fault)
	spaceSetC   float64
	supMinC     float64 // supply setpoint limits of the zone temperature loop
	supMaxC     float64

	// Zone: sensible gains kW, envelope kW/K, peak solar kW, occupant
	// moisture kg/s, infiltration kg/s of outdoor air, thermal capacity
	// kJ/K and moisture storage as kg of dry air.
	qOcc, qUnocc, ua, qSolar float64
	gOcc                     float64
	infil                    float64
	capKJK, moistKg          float64

	reheatCapKW   float64
	bypass        float64 // the coil's mean bypass factor (0.06-0.11: the AHRI rating point's air leaves it at about 96-93 % RH)
	eer95         float64 // DX: EER at 95 °F outdoor, Btu/Wh
	eerPerK       float64 // DX: change of EER per K above 35 °C
	plantKWPerTon float64 // chilled water: plant kW per ton at 30 °C outdoor
	boilerEff     float64
	coolCapKW     float64 // coil capacity, for valve positions

	// Configuration facts that are not simulated.
	cfg cfgFacts

	points []pointDef
}

// cfgFacts are what the configuration says about an air handler.
type cfgFacts struct {
	ratedEER      float64
	eerPerK       float64
	plantKWPerTon float64
	boilerEff     float64
	basis         string
	fan           string
	heatRise      string
	spaceGain     string    // space_moisture_gain, when the space adds less or more than the default
	target        [2]string // key, value
}

// airHandlerDefs returns the five air handlers.
func airHandlerDefs() []airHandlerDef {
	weekdays := func(on, off float64) schedule {
		var s schedule
		for d := time.Monday; d <= time.Friday; d++ {
			s[d] = [2]float64{on, off}
		}
		return s
	}
	clinic := weekdays(6.5, 19)
	clinic[time.Saturday] = [2]float64{7.5, 13.5}
	imaging := weekdays(6.75, 19.25)
	imaging[time.Saturday] = [2]float64{6.75, 19.25}
	pharmacy := weekdays(8, 20)
	pharmacy[time.Saturday] = [2]float64{8, 20}
	longHeader := [4]string{"Timestamp", "Point Name", "Value", "Units"}

	return []airHandlerDef{
		{
			AirHandler: AirHandler{ID: "AHU-1", Name: "Clinic wing", Cooling: "dx", Reheat: "electric",
				Behaviour: "good dew-point control: coil leaving temperature reset to what the zone dew-point target needs, electric reheat only to make up the supply temperature"},
			ctrl: ctrlDewPointReset, file: "ahu-1-clinic-cov.csv", header: longHeader,
			cfm: 12000, oaOcc: 0.25, fanRiseK: 1.6 / 1.8, hours: clinic,
			spaceSetC: 22.8, supMinC: 12.8, supMaxC: 20,
			qOcc: 44, qUnocc: 3, ua: 2.2, qSolar: 9, gOcc: 0.0024, infil: 0.25,
			capKJK: 80000, moistKg: 22000,
			reheatCapKW: 60, bypass: 0.075, eer95: 11.4, eerPerK: -0.2, coolCapKW: 190,
			cfg: cfgFacts{basis: "standard", fan: "draw_through", heatRise: "1.6F",
				target: [2]string{"max_space_dewpoint", "55F"}},
			points: []pointDef{
				temp("entering_temp", "AHU-1 Mixed Air Temp", sigEnterT, 7),
				rhPt("entering_rh", "AHU-1 Mixed Air RH", sigEnterRH, 9),
				temp("leaving_temp", "AHU-1 Cooling Coil Leaving Temp", sigLeaveT, 12),
				temp("supply_temp", "AHU-1 Supply Air Temp", sigSupplyT, 14),
				interval("supply_flow", "AHU-1 Supply Airflow", "CFM", "CFM", sigFlow, 0),
				interval("cooling_kw", "AHU-1 Compressor Power", "kW", "kW", sigCoolKW, 1),
				interval("reheat_kw", "AHU-1 Electric Reheat Power", "kW", "kW", sigReheatKW, 1),
				temp("space_temp", "AHU-1 Zone Temp", sigSpaceT, 41),
				rhPt("space_rh", "AHU-1 Zone RH", sigSpaceRH, 43),
			},
		},
		{
			AirHandler: AirHandler{ID: "AHU-2", Name: "Imaging suite", Cooling: "dx", Reheat: "electric",
				Behaviour: "coil held at 50 °F and electric reheat to a fixed 60 °F supply, whatever the humidity"},
			ctrl: ctrlColdCoil, file: "ahu-2-imaging-cov.csv", header: longHeader,
			cfm: 10000, oaOcc: 0.2, fanRiseK: 1.0, hours: imaging,
			spaceSetC: 23.3, supMinC: 12.8, supMaxC: 20,
			qOcc: 40, qUnocc: 4, ua: 1.5, qSolar: 4, gOcc: 0.0012, infil: 0.2,
			capKJK: 60000, moistKg: 18000,
			reheatCapKW: 45, bypass: 0.06, eer95: 10.8, eerPerK: -0.18, coolCapKW: 160,
			cfg: cfgFacts{ratedEER: 10.5, eerPerK: -0.15, basis: "standard", fan: "draw_through",
				target: [2]string{"max_supply_dewpoint", "53F"}},
			points: []pointDef{
				temp("entering_temp", "AHU-2 MA Temp", sigEnterT, 5),
				rhPt("entering_rh", "AHU-2 MA Humidity", sigEnterRH, 6),
				temp("leaving_temp", "AHU-2 CC Discharge Temp", sigLeaveT, 18),
				temp("supply_temp", "AHU-2 SA Temp", sigSupplyT, 22),
				interval("supply_flow", "AHU-2 SA Flow", "CFM", "CFM", sigFlow, 0),
				interval("reheat_kw", "AHU-2 Elec Reheat Power", "kW", "kW", sigReheatKW, 1),
				interval("fan_kw", "AHU-2 SF Power", "kW", "kW", sigFanKW, 2),
			},
		},
		{
			AirHandler: AirHandler{ID: "AHU-3", Name: "Administration", Cooling: "dx", Reheat: "electric",
				Behaviour: "schedule fault: runs all night with the outdoor damper shut, cooling to 53 °F and reheating while the air is already dry"},
			ctrl: ctrlScheduleFault, file: "ahu-3-admin-cov.csv", header: longHeader,
			cfm: 8000, oaOcc: 0.2, oaUnocc: 0, fanRiseK: 1.2 / 1.8, hours: weekdays(7, 18), alwaysOn: true,
			spaceSetC: 22.8, supMinC: 12.8, supMaxC: 22.2,
			qOcc: 21, qUnocc: 4, ua: 1.4, qSolar: 7, gOcc: 0.0015, infil: 0.12,
			capKJK: 50000, moistKg: 15000,
			reheatCapKW: 35, bypass: 0.09, eer95: 9.9, eerPerK: -0.17, coolCapKW: 120,
			cfg: cfgFacts{ratedEER: 9.8, eerPerK: -0.15, basis: "standard", fan: "draw_through", heatRise: "1.2F",
				target: [2]string{"max_space_dewpoint", "55F"}},
			points: []pointDef{
				temp("entering_temp", "AHU-3 MAT", sigEnterT, 3),
				{role: "entering_dewpoint", name: "AHU-3 MA Dewpoint", fileUnit: "°F", cfgUnit: "F", sig: sigEnterDP, mode: logCOV, deadband: 0.3, decimals: 1, offset: 4},
				temp("leaving_temp", "AHU-3 DAT Coil", sigLeaveT, 26),
				temp("supply_temp", "AHU-3 SAT", sigSupplyT, 27),
				interval("supply_flow", "AHU-3 Supply Flow", "CFM", "CFM", sigFlow, 0),
				temp("space_temp", "AHU-3 Space Temp", sigSpaceT, 33),
				rhPt("space_rh", "AHU-3 Space RH", sigSpaceRH, 34),
				binary("AHU-3 Occupancy Command", sigOccCmd, 50),
				binary("AHU-3 Supply Fan Status", sigFanStatus, 51),
			},
		},
		{
			AirHandler: AirHandler{ID: "AHU-4", Name: "Laboratory (100 % outdoor air)", Cooling: "chilled_water", Reheat: "hot_water",
				Behaviour: "100 % outdoor air: chilled-water coil reset on the outdoor dew point, hot-water reheat from a gas boiler, priced as fuel"},
			ctrl: ctrlOutdoorReset, file: "ahu-4-lab-cov.csv.gz", gz: true, header: longHeader,
			cfm: 14000, actual: true, oaOcc: 1, oaUnocc: 1, blowThrough: true, fanRiseK: 1.0, hours: weekdays(7, 19), alwaysOn: true,
			spaceSetC: 21.7, supMinC: 12.8, supMaxC: 18.3,
			qOcc: 42, qUnocc: 30, ua: 1.5, qSolar: 6, gOcc: 0.0010, infil: 0,
			capKJK: 70000, moistKg: 26000,
			reheatCapKW: 110, bypass: 0.067, plantKWPerTon: 0.82, boilerEff: 0.82, coolCapKW: 420,
			cfg: cfgFacts{plantKWPerTon: 0.85, boilerEff: 0.82, basis: "actual", fan: "blow_through",
				spaceGain: "0.15g/kg", target: [2]string{"max_space_rh", "50%"}},
			points: []pointDef{
				temp("entering_temp", "AHU-4 Coil Entering Temp", sigEnterT, 2),
				rhPt("entering_rh", "AHU-4 Coil Entering RH", sigEnterRH, 8),
				temp("leaving_temp", "AHU-4 Coil Leaving Temp", sigLeaveT, 15),
				rhPt("leaving_rh", "AHU-4 Coil Leaving RH", sigLeaveRH, 16),
				temp("supply_temp", "AHU-4 Supply Temp", sigSupplyT, 20),
				interval("supply_flow", "AHU-4 Supply Flow", "CFM", "CFM", sigFlow, 0),
				interval("cooling_valve", "AHU-4 CHW Valve", "%", "%", sigCoolValve, 0),
				interval("reheat_valve", "AHU-4 HW Valve", "%", "%", sigReheatValve, 0),
				temp("space_temp", "AHU-4 Lab Temp", sigSpaceT, 38),
			},
		},
		{
			AirHandler: AirHandler{ID: "RTU-5", Name: "Pharmacy and storage", Cooling: "dx", Reheat: "recovered",
				Behaviour: "packaged unit with hot-gas (condenser heat) reheat in dehumidification mode: reheat from recovered heat, no purchased reheat energy"},
			ctrl: ctrlHotGas, file: "rtu-5-pharmacy-5min.csv", wide: true,
			cfm: 6000, oaOcc: 0.15, oaUnocc: 0.15, fanRiseK: 0.9 / 1.8, hours: pharmacy, alwaysOn: true,
			spaceSetC: 21.1, supMinC: 12.8, supMaxC: 20,
			qOcc: 12, qUnocc: 7, ua: 0.6, qSolar: 3, gOcc: 0.0004, infil: 0.05,
			capKJK: 30000, moistKg: 9000,
			reheatCapKW: 26, bypass: 0.107, eer95: 10.2, eerPerK: -0.19, coolCapKW: 80,
			cfg: cfgFacts{basis: "standard", fan: "draw_through", heatRise: "0.9F",
				target: [2]string{"max_space_rh", "55%"}},
			points: []pointDef{
				interval("entering_temp", "RTU-5 Entering Air Temp", "°F", "F", sigEnterT, 1),
				interval("entering_rh", "RTU-5 Entering Air RH", "%RH", "%", sigEnterRH, 1),
				interval("leaving_temp", "RTU-5 Evaporator Leaving Temp", "°F", "F", sigLeaveT, 1),
				interval("supply_temp", "RTU-5 Supply Air Temp", "°F", "F", sigSupplyT, 1),
				interval("supply_flow", "RTU-5 Supply Airflow", "CFM", "CFM", sigFlow, 0),
				interval("cooling_kw", "RTU-5 Compressor Power", "kW", "kW", sigCoolKW, 2),
				interval("reheat_valve", "RTU-5 Hot Gas Reheat Valve", "%", "%", sigReheatValve, 0),
				interval("space_temp", "RTU-5 Space Temp", "°F", "F", sigSpaceT, 1),
				interval("space_rh", "RTU-5 Space RH", "%RH", "%", sigSpaceRH, 1),
			},
		},
	}
}

// weatherFile is the site weather station's export, shared by the units
// that map outdoor points.
const weatherFile = "weather-station-cov.csv"

var weatherPoints = []pointDef{
	temp("outdoor_temp", "Weather Station OA Temp", 0, 11),
	rhPt("outdoor_rh", "Weather Station OA RH", 1, 13),
}

// outdoorRoles says which air handlers map which weather-station point.
var outdoorRoles = map[string][]string{
	"AHU-1": {"outdoor_temp", "outdoor_rh"},
	"AHU-2": {"outdoor_temp"},
	"AHU-3": {"outdoor_temp"},
}
