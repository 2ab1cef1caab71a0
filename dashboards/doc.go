// Package dashboards shows what the engine computed: the web dashboard
// (Handler: the overview ranked by avoidable cost, one air handler, its
// psychrometric chart, the alerts, and the JSON API behind them), the
// self-contained audit report (WriteReport, report.go) and the page of a
// before/after comparison (RenderCompare, compare_render.go; the analysis
// itself is the pure package metrics/compare).
//
// It reads results through the Results interface it declares (site.go);
// the backends in ingest/embedded and ingest/influx implement it. Sums over hours
// keep "unknown" apart from zero (Num encodes NaN as JSON null), ratios are
// taken of the sums, and 95 % half-widths are summed linearly across hours
// (sensor bias is the same from hour to hour: an upper bound).
//
// Charts are server-side SVG from the chart subpackage. The pages need no
// script and no outside resource; every name from the configuration or the
// data goes through html/template's escaping.
package dashboards
