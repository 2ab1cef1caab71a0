package dashboards

import (
	"bytes"
	"fmt"
	"html/template"
	"math"
	"time"

	"github.com/dewline/dewline/dashboards/chart"
	"github.com/dewline/dewline/metrics"
	"github.com/dewline/dewline/psychro"
)

// What each colour of the palette means on the pages: avoidable is always
// the warm ochre, cooling the blue, what the target needed the blue-green.
const (
	colorCooling   = chart.ColorBlue
	colorNeeded    = chart.ColorTeal
	colorAvoidable = chart.ColorOchre
	colorActual    = chart.ColorBlue
	colorRequired  = chart.ColorRose
	colorWater     = chart.ColorTeal
	colorEER       = chart.ColorGrey
)

func floats(v []Num) []float64 {
	out := make([]float64, len(v))
	for i, x := range v {
		out[i] = float64(x)
	}
	return out
}

// sparkSVG is the small daily trend of avoidable cost on the overview.
func sparkSVG(daily []Num) template.HTML {
	var b bytes.Buffer
	if err := chart.Spark(&b, floats(daily), 120, 28, colorAvoidable); err != nil {
		return ""
	}
	return template.HTML(b.String()) // the chart package escapes every text it writes
}

// shareBar is a unit's avoidable cost as a bar against the largest.
func shareBar(share float64) template.HTML {
	if math.IsNaN(share) || share < 0 {
		share = 0
	}
	w := math.Round(share*1000) / 10
	return template.HTML(fmt.Sprintf(`<svg class="share" viewBox="0 0 100 8" width="100" height="8" aria-hidden="true"><rect x="0" y="0" width="100" height="8" fill="#e8ecef"/><rect x="0" y="0" width="%g" height="8" fill="%s"/></svg>`, w, colorAvoidable))
}

// AirHandlerCharts are the charts of one unit's page.
type AirHandlerCharts struct {
	Energy, Temps, Water, EER template.HTML
}

func airHandlerCharts(uh *AirHandlerHours, d Display, zone *time.Location) (AirHandlerCharts, error) {
	var c AirHandlerCharts
	frame := func(title, ylabel string) chart.Frame {
		return chart.Frame{Title: title, YLabel: ylabel, Width: 960, Height: 260, Zone: zone}
	}
	render := func(dst *template.HTML, fn func(*bytes.Buffer) error) error {
		var b bytes.Buffer
		if err := fn(&b); err != nil {
			return err
		}
		*dst = template.HTML(b.String())
		return nil
	}
	err := render(&c.Energy, func(b *bytes.Buffer) error {
		return chart.StackedBars(b, frame("Energy by hour", "kWh"), uh.Hours, time.Hour, []chart.Series{
			{Name: "cooling input (electricity)", Class: "cooling", Color: colorCooling, Values: floats(uh.CoolingInput)},
			{Name: "reheat needed (heat)", Class: "needed", Color: colorNeeded, Values: floats(uh.ReheatNeeded)},
			{Name: "reheat avoidable (heat)", Class: "avoidable", Color: colorAvoidable, Values: floats(uh.ReheatAvoid)},
		})
	})
	if err != nil {
		return c, err
	}
	err = render(&c.Temps, func(b *bytes.Buffer) error {
		return chart.Lines(b, frame("Coil leaving temperature against what the humidity target required", d.TempUnit()), uh.Hours, []chart.Series{
			{Name: "coil leaving", Class: "leaving", Color: colorActual, Values: floats(uh.Leaving)},
			{Name: "required leaving", Class: "required", Color: colorRequired, Values: floats(uh.RequiredLeaving)},
		}, nil)
	})
	if err != nil {
		return c, err
	}
	lo, hi := make([]float64, len(uh.Water)), make([]float64, len(uh.Water))
	for i := range uh.Water {
		lo[i], hi[i] = float64(uh.Water[i]-uh.WaterU95[i]), float64(uh.Water[i]+uh.WaterU95[i])
	}
	err = render(&c.Water, func(b *bytes.Buffer) error {
		return chart.Lines(b, frame("Water removed by hour, with its 95 % band", d.WaterUnit()), uh.Hours, []chart.Series{
			{Name: "water removed", Class: "water", Color: colorWater, Values: floats(uh.Water)},
		}, []chart.Band{{Name: "95 % band", Lo: lo, Hi: hi, Color: colorWater}})
	})
	if err != nil {
		return c, err
	}
	err = render(&c.EER, func(b *bytes.Buffer) error {
		return chart.Lines(b, frame("Effective EER by hour", "Btu/Wh"), uh.Hours, []chart.Series{
			{Name: "effective EER", Class: "eer", Color: colorEER, Values: floats(uh.EER)},
		}, nil)
	})
	return c, err
}

// psyChartSVG draws a unit's hours on a psychrometric chart at its pressure.
func psyChartSVG(u AirHandler, st []HourStates, pressurePa float64, d Display, lines string) (template.HTML, error) {
	pc := chart.PsyChart{PressurePa: pressurePa, IP: d.IP, Lines: lines, Title: u.Name + " (" + u.ID + "): entering → coil leaving → supply"}
	tMin, tMax, wMax := 5.0, 40.0, 0.0
	for _, s := range st {
		tMin = math.Min(tMin, math.Min(float64(s.LeavingC), float64(s.EnteringC))-2)
		tMax = math.Max(tMax, math.Max(float64(s.SupplyC), float64(s.EnteringC))+2)
		wMax = math.Max(wMax, float64(s.EnteringW))
		pc.Paths = append(pc.Paths, chart.PsyPath{Points: []chart.PsyPoint{
			{TdbC: float64(s.EnteringC), W: float64(s.EnteringW), Label: "entering"},
			{TdbC: float64(s.LeavingC), W: float64(s.LeavingW), Label: "leaving"},
			{TdbC: float64(s.SupplyC), W: float64(s.SupplyW), Label: "supply"},
		}, Title: s.Hour.Format("2006-01-02 15:04Z")})
	}
	ws, err := psychro.SatHumRatio(tMax, pressurePa)
	if err != nil {
		return "", err
	}
	pc.TMinC, pc.TMaxC = math.Floor(tMin), math.Ceil(tMax)
	pc.WMax = math.Min(ws, math.Max(0.02, wMax*1.15))
	if u.Spec != nil {
		t := u.Spec.Target
		pt := &chart.PsyTarget{MaxDewPointC: math.NaN(), MaxRH: math.NaN(), SpaceTempC: math.NaN()}
		switch t.Kind {
		case metrics.TargetSupplyDewPoint, metrics.TargetSpaceDewPoint:
			pt.MaxDewPointC, pt.Label = t.DewPointC, "dew-point target"
		case metrics.TargetSpaceRH:
			pt.MaxRH, pt.SpaceTempC, pt.Label = t.RH, t.SpaceTempC, "space RH target"
		}
		pc.Target = pt
	}
	var b bytes.Buffer
	if err := pc.Render(&b); err != nil {
		return "", err
	}
	return template.HTML(b.String()), nil
}
