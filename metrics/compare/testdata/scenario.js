// An independent before/after scenario for dewline's comparison, with its
// counterfactual, computed with the npm package psychrolib (MIT licence),
// an implementation of ASHRAE Handbook - Fundamentals 2017 ch. 1 that
// shares no code with dewline.
//
//   node scenario.js OUT_HOURS.csv [SEED]   (SEED: another draw of weather and noise)
//
// Our own invented building: four weeks of hourly weather (two before a
// sequence change, two after) and three air handlers that cool to a fixed
// coil leaving temperature and reheat to a fixed supply temperature.
// On 2026-06-15 00:00 UTC, AHU-1 gets a reheat lockout: while the entering
// air is already drier than its supply dew-point target (12 C), the coil
// only cools to the supply temperature and the reheat stays off. AHU-2 and
// AHU-3 change nothing. Each unit is run twice over the same weather:
// as it happened, and as it would have run without the change (the
// counterfactual). The true change is the difference of the two runs.
// A third run has the lockout from the first hour: with the counterfactual
// it gives the true change in the before period's weather.
//
// Per hour (steady state, one hour = one step):
//   - entering air: mass-weighted mix of outdoor air and return air, in
//     humidity ratio and enthalpy; return air at 24 C with the previous
//     hour's supply humidity ratio plus the space's moisture gain;
//   - coil: leaving at the set temperature, at most 95 % RH, never wetter
//     than the entering air; water = m (W_in - W_lv);
//     coil load = m (h_in - h_lv) - m_w 4.186 t_lv;
//   - cooling input = coil load / COP, COP = 3.2 + 0.04 (35 - t_out);
//   - reheat (electric, COP 1) = m (h(t_sup, W_lv) - h(t_lv, W_lv));
//   - cost = 0.15 per kWh of cooling input and reheat.
// The figures a building would log carry measurement errors: an AR(1)
// multiplicative error (phi 0.7, sd 3 %) per unit common to the airflow
// and every energy, as a drifting airflow reading would give; an AR(1)
// error (phi 0.6, sd 2 %) of each energy of its own, as the temperature
// differences behind it would give; and +-0.2 K on the dew points. The
// outdoor dry bulb and dew point (the weather station's hourly means) are
// logged with +-0.2 K and +-0.3 K.
'use strict';
const fs = require('fs');
const path = require('path');
const dir = process.env.DEWLINE_PSYCHROLIB;
if (!dir) { console.error('DEWLINE_PSYCHROLIB is not set'); process.exit(2); }
const psy = require(path.join(dir, 'psychrolib.js'));
psy.SetUnitSystem(psy.SI);

const P = 101325, RH_LV = 0.95, PRICE = 0.15, TARGET_DP = 12;
let seed = Number(process.argv[3] || 16061500);
const rand = () => { seed = (seed * 1664525 + 1013904223) % 4294967296; return seed / 4294967296; };
const gauss = () => { let s = 0; for (let i = 0; i < 12; i++) s += rand(); return s - 6; };
// The outdoor sensors' noise has a stream of its own, so that adding them
// left every other draw as it was.
let seedOut = (Number(process.argv[3] || 16061500) * 7 + 12345) % 4294967296;
const gaussOut = () => {
  let s = 0;
  for (let i = 0; i < 12; i++) { seedOut = (seedOut * 1664525 + 1013904223) % 4294967296; s += seedOut / 4294967296; }
  return s - 6;
};

const start = Date.UTC(2026, 5, 1, 0, 0, 0); // Monday 2026-06-01
const change = Date.UTC(2026, 5, 15, 0, 0, 0);
const HOURS = 28 * 24;

// Weather: outdoor dew point with fronts of a few days, drier spells in the
// second fortnight; dry bulb above it by a diurnal depression.
const weather = [];
for (let h = 0; h < HOURS; h++) {
  const d = h / 24;
  const td = 13.5 + 4.5 * Math.sin(2 * Math.PI * d / 4.3) + 2.5 * Math.sin(2 * Math.PI * d / 9.1 + 1)
    - 2.0 * Math.max(0, Math.sin(2 * Math.PI * (d - 14) / 10)) * (d >= 14 ? 1 : 0) + 0.4 * gauss();
  const dep = 6 + 5 * Math.sin(2 * Math.PI * ((h % 24) - 9) / 24) + 0.5 * gauss();
  weather.push({ td, t: td + Math.max(0.5, dep) });
}

const units = [
  { id: 'AHU-1', q: 5.0, qUnocc: 2.5, oa: 0.30, tLv: 11.0, tLvUnocc: 12.0, tSup: 17.0, gain: 0.0008, fixed: true },
  { id: 'AHU-2', q: 3.0, qUnocc: 0.0, oa: 0.20, tLv: 10.5, tLvUnocc: 10.5, tSup: 16.5, gain: 0.0009, fixed: false },
  { id: 'AHU-3', q: 4.0, qUnocc: 4.0, oa: 0.40, tLv: 11.5, tLvUnocc: 11.5, tSup: 18.0, gain: 0.0006, fixed: false },
];

const hk = (t, w) => psy.GetMoistAirEnthalpy(t, w) / 1000; // kJ/kg
const occupiedAt = (ms) => { const t = new Date(ms); const wd = t.getUTCDay(); const hr = t.getUTCHours(); return wd >= 1 && wd <= 5 && hr >= 6 && hr < 19; };

function run(u, lockout, from) {
  const out = [];
  let wSupPrev = psy.GetHumRatioFromTDewPoint(10, P);
  for (let h = 0; h < HOURS; h++) {
    const ms = start + h * 3600e3;
    const occ = occupiedAt(ms);
    const q = occ ? u.q : u.qUnocc;
    const m = 1.204 * q * 3600; // kg of dry air in the hour (standard air)
    const wo = psy.GetHumRatioFromTDewPoint(weather[h].td, P);
    const ho = hk(weather[h].t, wo);
    const occGain = occ ? u.gain : u.gain / 3;
    const wr = wSupPrev + occGain;
    const hr = hk(24, wr);
    const wIn = u.oa * wo + (1 - u.oa) * wr;
    const hIn = u.oa * ho + (1 - u.oa) * hr;
    const tIn = psy.GetTDryBulbFromEnthalpyAndHumRatio(hIn * 1000, wIn);
    const tdIn = psy.GetTDewPointFromHumRatio(tIn, wIn, P);
    let tLv = occ ? u.tLv : u.tLvUnocc;
    let reheatOn = true;
    if (lockout && ms >= from && tdIn < TARGET_DP) { tLv = Math.min(u.tSup, tIn); reheatOn = false; }
    const r = { hour: new Date(ms).toISOString(), occ, m: 0, tIn, tdIn, tdLv: tdIn, reheat: 0, cool: 0, water: 0, cost: 0 };
    if (m > 0) {
      let wLv = wIn, coil = 0, water = 0;
      if (tIn - tLv > 0.5) {
        wLv = Math.min(wIn, psy.GetHumRatioFromRelHum(tLv, RH_LV, P));
        water = m * (wIn - wLv);
        coil = (m * (hIn - hk(tLv, wLv)) - water * 4.186 * tLv) / 3600; // kWh
      } else {
        tLv = tIn;
      }
      const cop = 3.2 + 0.04 * (35 - weather[h].t);
      const reheat = reheatOn && u.tSup > tLv ? m * (hk(u.tSup, wLv) - hk(tLv, wLv)) / 3600 : 0;
      r.m = m; r.reheat = reheat; r.cool = coil / cop; r.water = water; r.cost = PRICE * (coil / cop + reheat);
      r.tdLv = psy.GetTDewPointFromHumRatio(tLv, wLv, P);
      wSupPrev = wLv;
    } else {
      wSupPrev = wr - occGain; // no supply: the space drifts with the return air
    }
    out.push(r);
  }
  return out;
}

const rows = ['ahu,hour,occupied,dry_air_kg,entering_temp_c,entering_dewpoint_c,leaving_dewpoint_c,outdoor_temp_c,outdoor_dewpoint_c,reheat_kwh,cooling_input_kwh,water_removed_kg,cost,' +
  'true_reheat_kwh,true_cooling_input_kwh,true_water_removed_kg,true_cost,cf_reheat_kwh,cf_cooling_input_kwh,cf_water_removed_kg,cf_cost,always_reheat_kwh'];
for (const u of units) {
  const actual = run(u, u.fixed, change), cf = run(u, false, change), always = run(u, u.fixed, start);
  let e = 0;
  const own = [0, 0, 0];
  for (let h = 0; h < HOURS; h++) {
    e = 0.7 * e + Math.sqrt(1 - 0.49) * 0.03 * gauss();
    for (let j = 0; j < 3; j++) own[j] = 0.6 * own[j] + 0.8 * 0.02 * gauss();
    const k = 1 + e, a = actual[h], c = cf[h];
    const f = (x) => x.toPrecision(10);
    const reheat = a.reheat * k * (1 + own[0]), cool = a.cool * k * (1 + own[1]), water = a.water * k * (1 + own[2]);
    rows.push([u.id, a.hour, a.occ ? 1 : 0, f(a.m * k), f(a.tIn + 0.1 * gauss()), f(a.tdIn + 0.2 * gauss()), f(a.tdLv + 0.2 * gauss()),
      f(weather[h].t + 0.2 * gaussOut()), f(weather[h].td + 0.3 * gaussOut()),
      f(reheat), f(cool), f(water), f(PRICE * (cool + reheat)),
      f(a.reheat), f(a.cool), f(a.water), f(a.cost), f(c.reheat), f(c.cool), f(c.water), f(c.cost), f(always[h].reheat)].join(','));
  }
}
fs.writeFileSync(process.argv[2], rows.join('\n') + '\n');
