// Package chart draws dewline's charts as inline SVG, generated on the
// server: the web dashboard and the self-contained HTML report embed them
// without JavaScript or any outside resource.
//
// # Charts
//
//	StackedBars(w, frame, times, step, stacks)  hourly energy, series stacked per hour
//	Lines(w, frame, times, lines, bands)        e.g. coil leaving vs required leaving, with an uncertainty band
//	HBars(w, frame, labels, values, color)      a ranking, one bar per item
//	Spark(w, values, width, height, color)      a small trend without axes
//	PsyChart{...}.Render(w)                     a psychrometric chart with the hours' processes
//	PsyChart{...}.Pos(tdbC, w)                  where Render puts a state, for tests
//
// Time charts take a Frame (title, value-axis label with its unit, size,
// time zone, optional fixed value range). Values are float64; NaN or ±Inf
// means missing and is drawn as a gap (lines, bands) or as nothing (bars),
// never written out. Value axes use ticks of 1, 2 or 5 times a power of ten;
// time axes put ticks on whole local minutes, hours, midnights, Mondays or
// first days of months in Frame.Zone, across daylight-saving changes.
//
// # Units
//
// The psychrometric chart takes SI: dry bulb in °C, humidity ratio W in kg
// of water per kg of dry air, pressure in Pa, RH as a fraction. Its physics
// is package psychro's (ASHRAE Handbook - Fundamentals 2017 ch. 1) at the
// chart's pressure: the saturation and RH curves, enthalpy (or wet-bulb)
// lines, dew points of the humidity-ratio grid and the humidity target. With
// IP set the axes are labelled in °F and grains per lb and the lines in
// Btu/lb (IP enthalpy datum), while positions stay the same: the same state
// lands on the same spot in both.
//
// Time charts carry the unit in Frame.YLabel; they do not convert values.
//
// # Output
//
//   - One <svg> element with a viewBox and width="100%" (it scales with its
//     container; Spark has a fixed size in pixels), role="img", an
//     aria-label describing the chart, a <title> and a legend.
//   - No style attributes and no <style> element, so pages can serve a strict
//     Content-Security-Policy (style-src 'self'): colours and strokes are
//     SVG presentation attributes, and every element of interest has a class
//     (prefix "dlc-") that the page's stylesheet may refine. Definitions that
//     need ids (clip paths, markers) take ids derived from their content, so
//     several charts in one page do not clash.
//   - Every text from data or configuration (titles, names, labels, units)
//     is XML-escaped; invalid UTF-8 and characters XML forbids become U+FFFD.
//     Colours pass only when they look like a CSS colour (#hex, a keyword,
//     rgb()/hsl()); class names keep only letters, digits, '-' and '_'.
//   - Coordinates are rounded to 0.1 user unit and path data is relative
//     and merged, so that a 30-day hourly chart of three series stays near
//     30 KB and a psychrometric chart of 720 hours near 55 KB.
//   - State markers of the psychrometric chart drawn in full carry their kind
//     as a class (dlc-psy-entering, dlc-psy-leaving, dlc-psy-supply) and
//     data-tdb (°C, 0.01) and data-w (kg/kg, 1e-6) attributes; the centre of
//     the marker's bounding box is Pos(data-tdb, data-w).
//
// The palette is the project's own (palette.go): a muted blue and an ochre
// first, kinds also told apart by shape or dash.
//
// # What it must never do
//
// chart does no I/O beyond the writer it is given, reads no clock and never
// logs. Bad input (mismatched lengths, unsorted times, impossible sizes or
// pressures) returns an error naming the chart and the fix, and nothing is
// written; a render either writes the whole document or nothing. No "NaN" or
// "Inf" ever reaches the output.
package chart
