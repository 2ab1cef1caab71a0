package psychro

// DefaultLeavingRH is the relative humidity assumed for air leaving a wet
// cooling coil when it is not measured: typically 90-95 %, not 100 %
// (common practice, no source).
const DefaultLeavingRH = 0.95

// Mix returns the state of the adiabatic mix of two streams weighted by
// their dry-air masses (or mass flows) ma and mb, kg: W and h mix linearly
// by dry-air mass (ASHRAE ch. 1, "Adiabatic mixing of two moist airstreams"). Both streams must be at the same
// pressure within 1 %.
func Mix(a State, ma float64, b State, mb float64) (State, error) {
	if !finite(ma) {
		return State{}, notFinite(inMass, ma)
	}
	if !finite(mb) {
		return State{}, notFinite(inMass, mb)
	}
	if ma < 0 || mb < 0 || ma+mb <= 0 {
		return State{}, outOfRange(inMass, ma+mb, "stream masses must be non-negative with a positive sum")
	}
	if d := a.PressurePa - b.PressurePa; d > 0.01*a.PressurePa || -d > 0.01*a.PressurePa {
		return State{}, outOfRange(inPressure, b.PressurePa, "the two streams differ in pressure by more than 1 %")
	}
	m := ma + mb
	w := (ma*a.HumRatio + mb*b.HumRatio) / m
	h := (ma*a.EnthalpyKJPerKg + mb*b.EnthalpyKJPerKg) / m
	p := (ma*a.PressurePa + mb*b.PressurePa) / m
	t, err := DryBulbFromEnthalpy(h, w)
	if err != nil {
		return State{}, err
	}
	return NewStateHumRatio(t, w, p)
}

// CoilLeaving returns the state of air leaving a cooling coil at leavingC
// when only its temperature is known: if the coil cools the air below the
// entering dew point, the leaving air is taken at leavingRHFrac (typically
// DefaultLeavingRH) but never wetter than the entering air; otherwise the
// coil is dry and W is unchanged. The coil never adds moisture.
func CoilLeaving(in State, leavingC, leavingRHFrac float64) (State, error) {
	if err := checkTemp(inTemperature, leavingC); err != nil {
		return State{}, err
	}
	if err := checkRH(inLeavingRH, leavingRHFrac); err != nil {
		return State{}, err
	}
	w := in.HumRatio
	if leavingC < in.DewPointC {
		wl, err := HumRatioFromRH(leavingC, leavingRHFrac, in.PressurePa)
		if err != nil {
			return State{}, err
		}
		if wl < w {
			w = wl
		}
	}
	return NewStateHumRatio(leavingC, w, in.PressurePa)
}

// CoilLoad is the split of a cooling-coil process. With a dry-air mass in kg
// the energies are kJ and the water kg; with a mass flow in kg/s they are kW
// and kg/s.
type CoilLoad struct {
	Water         float64 // water condensed, m_da (W_in - W_out)
	Sensible      float64 // m_da c_p,moist(W_in) (t_in - t_out)
	Latent        float64 // Total - Sensible
	Total         float64 // m_da (h_in - h_out) - m_w h_w(t_out): the condensate carries enthalpy away
	TotalGross    float64 // m_da (h_in - h_out), without the condensate term
	LatentGross   float64 // TotalGross - Sensible
	CondensateOut float64 // m_w h_w(t_out), the enthalpy leaving with the condensate
}

// Coil splits the process from in to out for a dry-air mass (or flow) mDa
// into sensible, latent and total parts, with and without the condensate term
// (ASHRAE ch. 1, "Cooling and dehumidifying of moist air": q = m_da[(h1 - h2)
// - (W1 - W2) h_w2]). A coil that adds moisture (out wetter than in) gives a
// negative Water: callers treat that as a data-quality finding.
func Coil(mDa float64, in, out State) (CoilLoad, error) {
	if !finite(mDa) {
		return CoilLoad{}, notFinite(inMass, mDa)
	}
	if mDa < 0 {
		return CoilLoad{}, outOfRange(inMass, mDa, "must not be negative")
	}
	var c CoilLoad
	c.Water = mDa * (in.HumRatio - out.HumRatio)
	c.TotalGross = mDa * (in.EnthalpyKJPerKg - out.EnthalpyKJPerKg)
	c.CondensateOut = c.Water * condensateEnthalpy(out.DryBulbC)
	c.Total = c.TotalGross - c.CondensateOut
	c.Sensible = mDa * (CpDryAir + CpVapour*in.HumRatio) * (in.DryBulbC - out.DryBulbC)
	c.Latent = c.Total - c.Sensible
	c.LatentGross = c.TotalGross - c.Sensible
	return c, nil
}

// ReheatSensible returns the sensible heat a reheat coil adds to a dry-air
// mass (or flow) mDa raising it from inC to outC at humidity ratio w:
// m_da (1.006 + 1.86 W)(t_out - t_in). Negative when the air cools.
func ReheatSensible(mDa, inC, outC, w float64) (float64, error) {
	if !finite(mDa) {
		return 0, notFinite(inMass, mDa)
	}
	if mDa < 0 {
		return 0, outOfRange(inMass, mDa, "must not be negative")
	}
	if err := checkTemp(inTemperature, inC); err != nil {
		return 0, err
	}
	if err := checkTemp(inTemperature, outC); err != nil {
		return 0, err
	}
	if err := checkHumRatio(w); err != nil {
		return 0, err
	}
	return mDa * (CpDryAir + CpVapour*w) * (outC - inC), nil
}
