// Synthetic ground truth for dewline's hourly engine, computed with the npm
// package psychrolib (MIT licence), an implementation of ASHRAE Handbook -
// Fundamentals 2017 ch. 1 that shares no code with dewline.
//
//   node groundtruth.js OUT_STEPS.csv OUT_HOURS.csv
//
// It invents 24 hours of one-minute readings of one air handler (our own
// scenario: a coil held cold with reheat by day, dry air with reheat at
// night, coil off for a spell) and writes the readings and, per hour, the
// water removed, coil loads and reheat figures that follow from the
// definitions below, so the engine can be checked against them:
//   - standard-air mass flow m = 1.204 kg/m3 x Q;
//   - coil leaving air by the apparatus-dew-point / bypass-factor model
//     (leaving state on the line from the entering state to a saturated
//     apparatus dew point ADP; t_lv = ADP + BF (t_in - ADP), W_out = W_s(ADP)
//     + BF (W_in - W_s(ADP)) when W_s(ADP) < W_in, else W_in), with BF that
//     of a coil leaving the AHRI rating point (80 °F dry bulb / 67 °F wet
//     bulb entering, 55 °F leaving) at 95 % RH; coil on when entering -
//     leaving > 0.5 K;
//   - coil total = m (h_in - h_out) - m_w 4.186 t_out;
//   - draw-through fan adds 0.5 K; reheat = m [h(t_sup - 0.5, W_out) - h(t_lv, W_out)]
//     when that rise exceeds 0.5 K;
//   - target: supply dew point <= 12 C; required leaving temperature where
//     this coil leaves air at that humidity ratio; needed coil temperature
//     T_c = min(t_in, t_sup - 0.5, T_req); reheat needed = m [h(t_sup - 0.5, W_c) - h(T_c, W_c)],
//     never more than the reheat delivered.
'use strict';
const fs = require('fs');
const path = require('path');
const dir = process.env.DEWLINE_PSYCHROLIB;
if (!dir) { console.error('DEWLINE_PSYCHROLIB is not set'); process.exit(2); }
const psy = require(path.join(dir, 'psychrolib.js'));
psy.SetUnitSystem(psy.SI);

const P = 101325, RHA = 0.95, FAN = 0.5, DB = 0.5, TD_TARGET = 12;
let seed = 20260714;
const rand = () => { seed = (seed * 1664525 + 1013904223) % 4294967296; return seed / 4294967296; };

// Bypass factor of the rating-point coil (bisection on the apparatus dew point).
const BF = (() => {
  const tIn = (80 - 32) / 1.8, tWb = (67 - 32) / 1.8, tOut = (55 - 32) / 1.8;
  const wIn = psy.GetHumRatioFromTWetBulb(tIn, tWb, P);
  const wOut = psy.GetHumRatioFromRelHum(tOut, RHA, P);
  let lo = -20, hi = tOut;
  for (let i = 0; i < 80; i++) {
    const adp = (lo + hi) / 2;
    const wLine = wOut - (wIn - wOut) * (tOut - adp) / (tIn - tOut);
    if (wLine > psy.GetSatHumRatio(adp, P)) lo = adp; else hi = adp;
  }
  const adp = (lo + hi) / 2;
  return (tOut - adp) / (tIn - adp);
})();
const coilW = (tIn, wIn, t) => {
  if (t >= tIn) return wIn;
  const ws = psy.GetSatHumRatio((t - BF * tIn) / (1 - BF), P);
  return ws < wIn ? ws + BF * (wIn - ws) : wIn;
};
const coilTReq = (tIn, wIn, w) => {
  let lo = -10, hi = tIn;
  for (let i = 0; i < 80; i++) {
    const mid = (lo + hi) / 2;
    if (coilW(tIn, wIn, mid) > w) hi = mid; else lo = mid;
  }
  return lo;
};

const steps = [], hours = [];
const wReq = psy.GetHumRatioFromTDewPoint(TD_TARGET, P);
for (let hr = 0; hr < 24; hr++) {
  const acc = { water: 0, total: 0, gross: 0, sens: 0, reheat: 0, needed: 0, avoid: 0, dryAir: 0 };
  for (let mi = 0; mi < 60; mi++) {
    const day = hr >= 7 && hr < 19;
    const tIn = (day ? 25.5 : 22.5) + 1.5 * Math.sin((hr * 60 + mi) / 180) + 0.2 * (rand() - 0.5);
    const rhIn = (day ? 0.62 : 0.40) + 0.04 * Math.sin((hr * 60 + mi) / 97) + 0.01 * (rand() - 0.5);
    let tLv = day ? 10.5 + 0.3 * (rand() - 0.5) : 12.5 + 0.3 * (rand() - 0.5);
    if (hr >= 3 && hr < 5) tLv = tIn - 0.2; // coil off
    const tSup = (hr >= 3 && hr < 5) ? tIn + FAN : 18 + 0.4 * (rand() - 0.5);
    const q = (day ? 4.2 : 2.8) + 0.1 * (rand() - 0.5); // m3/s of standard air
    steps.push([hr * 60 + mi, tIn, rhIn, tLv, tSup, q].map(x => typeof x === 'number' ? x.toPrecision(12) : x).join(','));

    const m = 1.204 * q;
    const wIn = psy.GetHumRatioFromRelHum(tIn, rhIn, P);
    const leaving = (t) => coilW(tIn, wIn, t);
    const hk = (t, w) => psy.GetMoistAirEnthalpy(t, w) / 1000;
    const wOut = leaving(tLv);
    acc.dryAir += m * 60;
    if (tIn - tLv > DB) {
      const mw = m * (wIn - wOut);
      acc.water += mw * 60;
      acc.gross += m * (hk(tIn, wIn) - hk(tLv, wOut)) / 60;
      acc.total += (m * (hk(tIn, wIn) - hk(tLv, wOut)) - mw * 4.186 * tLv) / 60;
      acc.sens += m * (1.006 + 1.86 * wIn) * (tIn - tLv) / 60;
    }
    const tSupEff = tSup - FAN;
    if (tSupEff - tLv > DB) {
      const reheat = m * (hk(tSupEff, wOut) - hk(tLv, wOut));
      let tReq = Infinity;
      if (wIn > wReq) tReq = coilTReq(tIn, wIn, wReq);
      const tc = Math.min(tIn, tSupEff, tReq);
      const wc = tc < tIn ? leaving(tc) : wIn;
      const needed = Math.min(reheat, Math.max(0, m * (hk(tSupEff, wc) - hk(tc, wc))));
      acc.reheat += reheat / 60;
      acc.needed += needed / 60;
      acc.avoid += Math.max(0, reheat - needed) / 60;
    }
  }
  hours.push([hr, acc.dryAir, acc.water, acc.total, acc.gross, acc.sens, acc.reheat, acc.needed, acc.avoid].map(x => x.toPrecision(12)).join(','));
}
fs.writeFileSync(process.argv[2], 'minute,t_in_c,rh_in,t_lv_c,t_sup_c,flow_m3s\n' + steps.join('\n') + '\n');
fs.writeFileSync(process.argv[3], 'hour,dry_air_kg,water_kg,coil_total_kwh,coil_gross_kwh,coil_sensible_kwh,reheat_kwh,reheat_needed_kwh,reheat_avoidable_kwh\n' + hours.join('\n') + '\n');
