package demo

import (
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"github.com/dewline/dewline/psychro"
)

// generator holds one run of the scenario.
type generator struct {
	loc         *time.Location
	pPa         float64
	from        time.Time
	n           int // minutes in the period
	seed        uint64
	airHandlers []airHandlerDef

	gapFrom, gapTo     int // minutes of the period
	stuckFrom, stuckTo int
}

// spinUp is how long the zones run before the period starts, so that the
// first logged values are settled rather than the initial guess.
const spinUp = 36 * 60

// random streams
const (
	streamWeather = iota + 1
	streamStation
	streamAirHandler // + unit index
)

// airHandlerSim is the state of one air handler and its zone.
type airHandlerSim struct {
	d   *airHandlerDef
	rng *rand.Rand

	tSp, wSp         float64 // zone dry bulb (°C) and humidity ratio (kg/kg)
	tLv              float64 // coil leaving temperature the coil has reached, °C
	qRh              float64 // reheat heat, kW
	casingT, casingW float64 // air in the stopped unit
	lastSupT         float64
	lastWLv          float64
	hunt, rhAR       float64 // control hunting (K) and leaving-RH wander
	pickup           float64 // controller's estimate of the zone's moisture pickup
	dehum, coldCoil  bool
	stuck            bool
	stuckVal         float64
	bias             [nSig]float64

	read  [nSig]float64 // this minute's readings in the logged units
	truth []hourTruth
}

func newAirHandlerSim(g *generator, idx int, pPa float64) (*airHandlerSim, error) {
	d := &g.airHandlers[idx]
	s := &airHandlerSim{d: d, rng: g.rng(streamAirHandler + uint64(idx))}
	s.tSp = d.spaceSetC
	w, err := psychro.HumRatioFromDewPoint(12.5, pPa)
	if err != nil {
		return nil, err
	}
	s.wSp, s.casingW, s.lastWLv = w, w, w
	s.casingT, s.tLv, s.lastSupT = s.tSp, s.tSp, 15
	// Calibration biases, the same all period, as 95 % ranges: ±0.16 K for
	// temperatures, ±1.6 % RH, ±0.4 K for the dew-point transmitter
	// (invented, inside the accuracies the configuration states).
	for k := range s.bias {
		switch sig(k) {
		case sigEnterRH, sigLeaveRH, sigSpaceRH:
			s.bias[k] = 0.8 * s.rng.NormFloat64() // % RH
		case sigEnterDP:
			s.bias[k] = 0.2 * s.rng.NormFloat64() // K
		default:
			s.bias[k] = 0.08 * s.rng.NormFloat64() // K
		}
	}
	s.truth = make([]hourTruth, (g.n+59)/60)
	for i := range s.truth {
		s.truth[i].MinRiseReheat = math.Inf(1)
	}
	return s, nil
}

// minuteCtx is what every unit needs to know about one minute.
type minuteCtx struct {
	i       int // minute of the period; negative during spin-up
	wd      time.Weekday
	h       float64 // local hours since midnight
	tOa     float64
	wOa     float64
	dpOa    float64
	sun     float64
	oa      psychro.State
	offline bool // the unit's controller logs nothing this minute
}

func cpa(w float64) float64 { return psychro.CpDryAir + psychro.CpVapour*w }

func clamp(v, lo, hi float64) float64 { return math.Max(lo, math.Min(hi, v)) }

// tempAtRH returns the temperature at which air at rhFrac has humidity
// ratio w: p_ws(T) = p_w(w) / RH.
func tempAtRH(w, rhFrac, pPa float64) (float64, error) {
	pw, err := psychro.VapPressureFromHumRatio(w, pPa)
	if err != nil {
		return 0, err
	}
	return psychro.DewPointFromVapPressure(pw / rhFrac)
}

func (s *airHandlerSim) noise(sd float64) float64 { return sd * s.rng.NormFloat64() }

// step advances the unit by one minute and sets its readings.
func (s *airHandlerSim) step(c *minuteCtx, pPa float64, stuck bool) error {
	d := s.d
	const dt = 60.0
	occ := d.hours.occupancy(c.wd, c.h)
	occupied := d.hours.occupied(c.wd, c.h)
	on := d.alwaysOn || occupied
	qs := d.qUnocc + (d.qOcc-d.qUnocc)*occ + d.ua*(c.tOa-s.tSp) + d.qSolar*c.sun
	gain := d.gOcc * occ

	// Zone sensors, read before the controls act on them.
	spaceRH, err := psychro.RHFromHumRatio(s.tSp, s.wSp, pPa)
	if err != nil {
		return fmt.Errorf("%w: %s zone: %v", errPhysics, d.ID, err)
	}
	s.read[sigSpaceT] = psychro.CToF(s.tSp + s.bias[sigSpaceT] + s.noise(0.04))
	s.read[sigSpaceRH] = clamp(100*spaceRH+s.bias[sigSpaceRH]+s.noise(0.25), 0, 100)
	if stuck {
		if !s.stuck {
			s.stuck, s.stuckVal = true, math.Round(s.read[sigSpaceRH]*10)/10
		}
		s.read[sigSpaceRH] = s.stuckVal
	} else {
		s.stuck = false
	}
	s.read[sigOccCmd] = b2f(occupied)
	s.read[sigFanStatus] = b2f(on)

	var tr *hourTruth
	if c.i >= 0 {
		tr = &s.truth[c.i/60]
		tr.Minutes++
		if !c.offline {
			tr.Logged++
		}
	}

	if !on {
		s.off(c, qs, gain, dt, pPa)
		return nil
	}

	// Dry-air mass flow: a fixed-speed fan; the actual-volume station of
	// the laboratory unit reads a volume at the supply state.
	var m float64
	if d.actual {
		v, err := psychro.SpecificVolume(s.lastSupT, s.lastWLv, pPa)
		if err != nil {
			return fmt.Errorf("%w: %s supply volume: %v", errPhysics, d.ID, err)
		}
		m = d.cfm * psychro.M3sPerCFM / v
	} else {
		m = d.cfm * psychro.M3sPerCFM * psychro.StandardAirDensity
	}
	m *= 1 + s.noise(0.003)

	// Mixed air.
	f := d.oaUnocc
	if occupied {
		f = d.oaOcc
	}
	ret, err := psychro.NewStateHumRatio(s.tSp+0.4, s.wSp, pPa)
	if err != nil {
		return fmt.Errorf("%w: %s return air: %v", errPhysics, d.ID, err)
	}
	var mix psychro.State
	switch {
	case f <= 0:
		mix = ret
	case f >= 1:
		mix = c.oa
	default:
		if mix, err = psychro.Mix(c.oa, f, ret, 1-f); err != nil {
			return fmt.Errorf("%w: %s mixed air: %v", errPhysics, d.ID, err)
		}
	}
	fanKW := d.fanRiseK * m * cpa(mix.HumRatio) * (1 + s.noise(0.01))
	ent := mix
	if d.blowThrough {
		if ent, err = psychro.NewStateHumRatio(mix.DryBulbC+fanKW/(m*cpa(mix.HumRatio)), mix.HumRatio, pPa); err != nil {
			return fmt.Errorf("%w: %s coil entering air: %v", errPhysics, d.ID, err)
		}
	}

	// Controls: the zone temperature loop gives the supply setpoint; each
	// sequence picks the coil setpoint.
	mcp := m * cpa(s.wSp)
	supLoop := clamp(d.spaceSetC-qs/mcp-2*(psychro.FToC(s.read[sigSpaceT])-d.spaceSetC), d.supMinC, d.supMaxC)
	supSP, coilSP := supLoop, supLoop-d.fanRiseK
	reheatOK := true
	switch d.ctrl {
	case ctrlDewPointReset:
		// Zone dew-point target 54.5 °F (0.5 °F inside the 55 °F limit):
		// the supply must be drier by the moisture the zone adds.
		dpSet := psychro.FToC(54.5)
		wSet, err := psychro.HumRatioFromDewPoint(dpSet, pPa)
		if err != nil {
			return err
		}
		k := 1 - math.Exp(-1.0/30)
		s.pickup += (math.Max(0, s.wSp-s.lastWLv) - s.pickup) * k
		tDh, err := tempAtRH(math.Max(wSet-s.pickup, 0.004), 0.95, pPa)
		if err != nil {
			return err
		}
		wMeas, err := psychro.HumRatioFromRH(psychro.FToC(s.read[sigSpaceT]), s.read[sigSpaceRH]/100, pPa)
		if err != nil {
			return err
		}
		dpMeas, err := psychro.DewPointFromHumRatio(wMeas, pPa)
		if err != nil {
			return err
		}
		tDh -= 0.6 * clamp(dpMeas-dpSet, -2, 2)
		coilSP = math.Min(supSP-d.fanRiseK, clamp(tDh, psychro.FToC(48), psychro.FToC(60)))
	case ctrlColdCoil:
		supSP, coilSP = psychro.FToC(60), psychro.FToC(50)
	case ctrlScheduleFault:
		coilSP = psychro.FToC(53)
	case ctrlOutdoorReset:
		switch {
		case c.dpOa > 14.5:
			s.coldCoil = true
		case c.dpOa < 13.7:
			s.coldCoil = false
		}
		coilSP = psychro.FToC(52.5)
		if s.coldCoil {
			coilSP = psychro.FToC(51)
		}
		coilSP = math.Min(coilSP, supSP)
	case ctrlHotGas:
		switch rh := s.read[sigSpaceRH]; {
		case rh > 54:
			s.dehum = true
		case rh < 49:
			s.dehum = false
		}
		if s.dehum {
			coilSP = psychro.FToC(50)
		} else {
			reheatOK = false
		}
	}

	// Cooling coil: the leaving temperature follows its setpoint with a
	// lag and some hunting; the leaving humidity follows the coil's
	// apparatus dew point and bypass factor (coilBypass).
	target := coilSP
	coilOn := target < ent.DryBulbC-0.3
	if !coilOn {
		target = ent.DryBulbC
	}
	s.tLv += (target - s.tLv) * (1 - math.Exp(-1/2.5))
	s.hunt = 0.85*s.hunt + 0.53*s.noise(0.12)
	s.rhAR = 0.995*s.rhAR + 0.1*s.noise(0.016)
	tLv := s.tLv
	if coilOn {
		tLv += s.hunt
	}
	tLv = math.Min(tLv, ent.DryBulbC)
	bf := clamp(d.bypass+s.rhAR, 0.03, 0.15)
	lv, err := coilBypass(ent, tLv, bf)
	if err != nil {
		return fmt.Errorf("%w: %s coil leaving: %v", errPhysics, d.ID, err)
	}
	coil, err := psychro.Coil(m, ent, lv)
	if err != nil {
		return fmt.Errorf("%w: %s coil load: %v", errPhysics, d.ID, err)
	}
	cpL := cpa(lv.HumRatio)

	// Fan heat after the coil (draw-through), then reheat to the setpoint.
	tAfter, fanHeat := tLv, 0.0
	if !d.blowThrough {
		fanHeat = fanKW
		tAfter += fanKW / (m * cpL)
	}
	// Reheat is enabled once the supply is 0.6 K below its setpoint and
	// then modulates down to zero, as sequences usually do.
	want := 0.0
	if reheatOK && (s.qRh > 0 || supSP-tAfter > 0.6) {
		want = clamp(m*cpL*(supSP-tAfter), 0, d.reheatCapKW)
	}
	lag := 0.7 // minutes: electric SCR
	switch d.Reheat {
	case "hot_water":
		lag = 4
	case "recovered":
		lag = 1.5
	}
	s.qRh += (want - s.qRh) * (1 - math.Exp(-1/lag))
	if s.qRh < 0.02 {
		s.qRh = 0
	}
	tSup := tAfter + s.qRh/(m*cpL)

	// Zone.
	s.tSp += dt / d.capKJK * (m*cpL*(tSup-s.tSp) + qs + d.infil*cpa(c.wOa)*(c.tOa-s.tSp))
	s.wSp += dt / d.moistKg * (m*(lv.HumRatio-s.wSp) + gain + d.infil*(c.wOa-s.wSp))
	s.lastSupT, s.lastWLv = tSup, lv.HumRatio
	s.casingT, s.casingW = tSup, lv.HumRatio

	// Purchased energy.
	coolKW := 0.0
	switch d.Cooling {
	case "dx":
		if coil.Total > 0.3 {
			cop := psychro.EERToCOP(d.eer95 + d.eerPerK*(c.tOa-35))
			coolKW = coil.Total / cop * (1 + s.noise(0.01))
		}
	case "chilled_water":
		coolKW = math.Max(0, coil.Total) * (d.plantKWPerTon + 0.012*(c.tOa-30)) / psychro.TonsToKW(1)
	}
	reheatIn := 0.0
	switch d.Reheat {
	case "electric":
		reheatIn = s.qRh
	case "hot_water":
		reheatIn = s.qRh / d.boilerEff
	}

	// Readings.
	r := &s.read
	r[sigEnterT] = psychro.CToF(ent.DryBulbC + s.bias[sigEnterT] + s.noise(0.04))
	r[sigEnterRH] = clamp(100*ent.RH+s.bias[sigEnterRH]+s.noise(0.25), 0, 100)
	r[sigEnterDP] = psychro.CToF(ent.DewPointC + s.bias[sigEnterDP] + s.noise(0.05))
	r[sigLeaveT] = psychro.CToF(tLv + s.bias[sigLeaveT] + s.noise(0.04))
	r[sigLeaveRH] = clamp(100*lv.RH+s.bias[sigLeaveRH]+s.noise(0.25), 0, 100)
	r[sigSupplyT] = psychro.CToF(tSup + s.bias[sigSupplyT] + s.noise(0.04))
	if d.actual {
		v, err := psychro.SpecificVolume(tSup, lv.HumRatio, pPa)
		if err != nil {
			return fmt.Errorf("%w: %s supply volume: %v", errPhysics, d.ID, err)
		}
		r[sigFlow] = m * v / psychro.M3sPerCFM * (1 + s.noise(0.004))
	} else {
		r[sigFlow] = m / psychro.StandardAirDensity / psychro.M3sPerCFM * (1 + s.noise(0.004))
	}
	r[sigCoolKW] = coolKW
	r[sigReheatKW] = reheatIn * (1 + s.noise(0.005))
	if d.Reheat != "electric" {
		r[sigReheatKW] = 0
	}
	r[sigFanKW] = fanKW
	r[sigCoolValve] = 100 * math.Pow(clamp(coil.Total/d.coolCapKW, 0, 1), 0.7)
	r[sigReheatValve] = 100 * math.Pow(clamp(s.qRh/d.reheatCapKW, 0, 1), 0.8)

	if tr != nil {
		tr.CoilTotalKWh += coil.Total / 60
		tr.CoilSensKWh += coil.Sensible / 60
		tr.WaterKg += coil.Water * 60
		tr.ReheatKWh += s.qRh / 60
		tr.ReheatInputKWh += reheatIn / 60
		tr.CoolingInKWh += coolKW / 60
		tr.FanHeatKWh += fanHeat / 60
		tr.MaxLeavingRH = math.Max(tr.MaxLeavingRH, lv.RH)
		if s.qRh > 0.5 {
			tr.ReheatMinutes++
			tr.MinRiseReheat = math.Min(tr.MinRiseReheat, tSup-tLv)
		}
	}
	return nil
}

// coilBypass is the state of air leaving a cooling coil at leavingC by the
// apparatus-dew-point / bypass-factor model (ASHRAE Handbook -
// Fundamentals, ch. 1, and HVAC Systems and Equipment, cooling coils;
// memory): a share bf of the air passes the coil untouched and the rest
// leaves saturated at the apparatus dew point ADP, so leavingC = ADP + bf
// (t_in - ADP) and W = W_s(ADP) + bf (W_in - W_s(ADP)); a coil whose ADP is
// above the entering dew point is dry and leaves W unchanged. The leaving
// RH then rises as the coil runs colder, as a real coil's does, instead of
// sitting at one value.
func coilBypass(in psychro.State, leavingC, bf float64) (psychro.State, error) {
	w := in.HumRatio
	if leavingC < in.DryBulbC {
		adp := (leavingC - bf*in.DryBulbC) / (1 - bf)
		ws, err := psychro.HumRatioFromRH(adp, 1, in.PressurePa)
		if err != nil {
			return psychro.State{}, err
		}
		if ws < w {
			w = ws + bf*(w-ws)
		}
		// The line lies below saturation; near-saturated entering air can
		// cross it by rounding.
		if wl, err := psychro.SatHumRatio(leavingC, in.PressurePa); err == nil {
			w = math.Min(w, wl)
		}
	}
	return psychro.NewStateHumRatio(leavingC, w, in.PressurePa)
}

// off is a minute with the fan stopped: the zone floats, the air in the
// unit drifts toward the mechanical room's.
func (s *airHandlerSim) off(c *minuteCtx, qs, gain, dt, pPa float64) {
	d := s.d
	s.qRh = 0
	s.tSp += dt / d.capKJK * (qs + d.infil*cpa(c.wOa)*(c.tOa-s.tSp))
	s.wSp += dt / d.moistKg * (gain + d.infil*(c.wOa-s.wSp))
	k := 1 - math.Exp(-1.0/40)
	s.casingT += (0.7*s.tSp + 0.3*c.tOa + 0.5 - s.casingT) * k
	s.casingW += (0.7*s.wSp + 0.3*c.wOa - s.casingW) * k
	s.tLv = s.casingT
	rh, err := psychro.RHFromHumRatio(s.casingT, s.casingW, pPa)
	if err != nil {
		rh = 0.5
	}
	rh = math.Min(rh, 1)
	dp := s.casingT
	if x, err := psychro.DewPointFromHumRatio(s.casingW, pPa); err == nil {
		dp = math.Min(x, s.casingT)
	}
	r := &s.read
	r[sigEnterT] = psychro.CToF(s.casingT - 0.2 + s.bias[sigEnterT] + s.noise(0.04))
	r[sigEnterRH] = clamp(100*rh+s.bias[sigEnterRH]+s.noise(0.25), 0, 100)
	r[sigEnterDP] = psychro.CToF(dp + s.bias[sigEnterDP] + s.noise(0.05))
	r[sigLeaveT] = psychro.CToF(s.casingT + s.bias[sigLeaveT] + s.noise(0.04))
	r[sigLeaveRH] = clamp(100*rh+s.bias[sigLeaveRH]+s.noise(0.25), 0, 100)
	r[sigSupplyT] = psychro.CToF(s.casingT + 0.1 + s.bias[sigSupplyT] + s.noise(0.04))
	r[sigFlow], r[sigCoolKW], r[sigReheatKW], r[sigFanKW] = 0, 0, 0, 0
	r[sigCoolValve], r[sigReheatValve] = 0, 0
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}
