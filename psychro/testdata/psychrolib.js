// Runs a grid of moist-air states through the npm package psychrolib
// (MIT licence, an independent implementation of ASHRAE Handbook -
// Fundamentals 2017 ch. 1) for dewline's cross-check test and benchmark.
//
//   node psychrolib.js check SI|IP in.csv out.csv
//       in.csv rows: t,rh,p (°C|°F, fraction, Pa|psia); out.csv rows:
//       W,td,twb,h,v,rho,W_from_td,W_from_twb (psychrolib units of the system)
//   node psychrolib.js bench in.csv repeats
//       prints JSON {bundle_per_s, wetbulb_per_s, states}: SI bundle
//       (W from RH, dew point, wet bulb, enthalpy, volume) and wet bulb alone,
//       per second of wall time, and bundle_per_cpu_s, wetbulb_per_cpu_s per
//       second of processor time (steadier on a loaded machine).
//
// DEWLINE_PSYCHROLIB names the folder that holds psychrolib.js.
'use strict';
const fs = require('fs');
const path = require('path');
const dir = process.env.DEWLINE_PSYCHROLIB;
if (!dir) { console.error('DEWLINE_PSYCHROLIB is not set'); process.exit(2); }
const mod = require(path.join(dir, 'psychrolib.js'));
const psy = mod.SetUnitSystem ? mod : new mod();

function readGrid(file) {
  const lines = fs.readFileSync(file, 'utf8').trim().split('\n');
  const t = new Float64Array(lines.length), rh = new Float64Array(lines.length), p = new Float64Array(lines.length);
  lines.forEach((l, i) => { const f = l.split(','); t[i] = +f[0]; rh[i] = +f[1]; p[i] = +f[2]; });
  return { t, rh, p, n: lines.length };
}

const [mode, a1, a2, a3] = process.argv.slice(2);
if (mode === 'check') {
  psy.SetUnitSystem(a1 === 'IP' ? psy.IP : psy.SI);
  const g = readGrid(a2);
  const out = [];
  for (let i = 0; i < g.n; i++) {
    const t = g.t[i], p = g.p[i];
    try {
      const W = psy.GetHumRatioFromRelHum(t, g.rh[i], p);
      const td = psy.GetTDewPointFromHumRatio(t, W, p);
      const twb = psy.GetTWetBulbFromHumRatio(t, W, p);
      out.push([W, td, twb, psy.GetMoistAirEnthalpy(t, W), psy.GetMoistAirVolume(t, W, p),
        psy.GetMoistAirDensity(t, W, p), psy.GetHumRatioFromTDewPoint(td, p),
        psy.GetHumRatioFromTWetBulb(t, twb, p)].map(x => x.toPrecision(17)).join(','));
    } catch (e) {
      out.push('error,' + String(e.message).replace(/,/g, ';'));
    }
  }
  fs.writeFileSync(a3, out.join('\n') + '\n');
} else if (mode === 'bench') {
  psy.SetUnitSystem(psy.SI);
  const g = readGrid(a1);
  const repeats = +a2 || 1;
  let sink = 0;
  const bundle = () => {
    for (let i = 0; i < g.n; i++) {
      const t = g.t[i], p = g.p[i];
      const W = psy.GetHumRatioFromRelHum(t, g.rh[i], p);
      sink += psy.GetTDewPointFromHumRatio(t, W, p) + psy.GetTWetBulbFromHumRatio(t, W, p)
        + psy.GetMoistAirEnthalpy(t, W) + psy.GetMoistAirVolume(t, W, p);
    }
  };
  const W = new Float64Array(g.n);
  for (let i = 0; i < g.n; i++) W[i] = psy.GetHumRatioFromRelHum(g.t[i], g.rh[i], g.p[i]);
  const wetbulb = () => { for (let i = 0; i < g.n; i++) sink += psy.GetTWetBulbFromHumRatio(g.t[i], W[i], g.p[i]); };
  const time = (fn) => {
    fn(); // warm up the JIT
    const t0 = process.hrtime.bigint(), c0 = process.cpuUsage();
    for (let r = 0; r < repeats; r++) fn();
    const c = process.cpuUsage(c0);
    return [Number(process.hrtime.bigint() - t0) / 1e9, (c.user + c.system) / 1e6];
  };
  const [tb, cb] = time(bundle), [tw, cw] = time(wetbulb);
  const n = g.n * repeats;
  console.log(JSON.stringify({ states: n, bundle_per_s: n / tb, wetbulb_per_s: n / tw,
    bundle_per_cpu_s: n / cb, wetbulb_per_cpu_s: n / cw, sink: sink > 0 }));
} else {
  console.error('usage: psychrolib.js check SI|IP in.csv out.csv | bench in.csv repeats');
  process.exit(2);
}
