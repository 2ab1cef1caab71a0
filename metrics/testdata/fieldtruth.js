// Field ground truth for dewline's hourly engine: one-minute physics of four
// invented air handlers, logged the way building controls log them, and the
// hourly truths that follow from the physics. The moist-air properties come
// from the npm package psychrolib (MIT licence), an implementation of ASHRAE
// Handbook - Fundamentals 2017 ch. 1 that shares no code with dewline; the
// coil is the apparatus-dew-point / bypass-factor model of the same
// handbook's air-conditioning process chapter (leaving state on the straight
// line from the entering state to a saturated apparatus dew point, a share
// BF of the air passing untouched); nothing here comes from dewline's code.
//
//   node fieldtruth.js OUT_DIR
//
// writes OUT_DIR/config.yaml (the configuration a careful user writes for
// these units), OUT_DIR/AHU-n.csv (long trend exports in local wall time,
// America/Chicago, across the 2026-11-01 fall-back) and OUT_DIR/truth.csv
// (per UTC hour and air handler: the physical figures).
//
// The scenario (our own invention, a clinic in a humid Gulf-coast climate):
//   - a week of weather with a dry spell (a front: outdoor dew point from
//     about 20 °C down to 7 °C for two days, then humid again);
//   - every unit mixes return and outdoor air; the space adds moisture (a
//     first-order space, one-hour time constant) and the return air follows;
//   - AHU-1: zone cycling swings the mixed-air temperature by about +-0.9 K
//     every 20 minutes at constant moisture; the mixed-air RH is logged every
//     15 minutes, the temperatures every minute; the RH sensor sticks for
//     seven hours on 2 November;
//   - AHU-2: chilled water, hot-water reheat, a coil-leaving RH sensor (noisy,
//     saturating at 100 %), coil run warm (dry) at night and in the dry spell;
//   - AHU-3: no mixed-air RH: return temperature (change of value) and RH
//     (15-minute), outdoor temperature and RH (5-minute), mixed-air
//     temperature (1-minute); the outdoor-air share sits at its minimum
//     (30 %) at night, at 42 % when occupied (demand-controlled
//     ventilation, with an outdoor airflow station logged every 5 minutes),
//     and an economizer opens it when the outdoor air is cool and dry;
//   - coils: bypass factors 0.07-0.12; AHU-1 and AHU-3 leave air of the
//     AHRI rating point (80/67 °F, cooled to 55 °F) at about 95 % RH, the
//     configuration's default; AHU-4's coil (BF 0.10) leaves it at about
//     93 %, which its configuration states as a commissioning check would;
//   - AHU-3's supply fan blows through the coil: it sits after the
//     mixed-air sensor, so its heat (0.8 kW per m3/s, logged every 5
//     minutes) reaches the coil, which removes it;
//   - the DX units (AHU-1, AHU-3, AHU-4) cycle at part load: their input
//     carries the part-load factor PLF = 1 - Cd (1 - PLR) of AHRI Standard
//     210/240 with the standard's default Cd = 0.25 (memory) and PLR = coil
//     load / rated capacity (150, 190 and 125 kW, on the nameplates the
//     configuration states); the compressor meters of AHU-1 and AHU-4 read
//     it, AHU-3's input is modelled from its nameplate;
//   - AHU-4: the coil set point follows the humidity target through a slow
//     reset that lags after the dry spell, so the coil runs warmer than the
//     target needs for hours (too little dehumidification), and colder than
//     needed at other times.
//
// Truth definitions, per minute, summed over each UTC hour:
//   m = 1.204 kg/s of dry air per m3/s of standard air (the standard-air
//   basis the configuration declares); water = m (W_in - W_out); coil net =
//   m (h_in - h_out) - water x 4.186 t_out (kJ/kg, condensate enthalpy),
//   h_in at the coil's entering air (a blow-through fan's heat,
//   t_mix + fan kW / (m cp), included);
//   reheat = m (h(t_lv + rise, W_out) - h(t_lv, W_out)); cooling input =
//   coil net / COP (DX: linear in outdoor temperature, as on the nameplate
//   the configuration states, divided by PLF; chilled water: plant kW per
//   kW of coil);
//   effective EER (electric only) = 3.412 (coil net - reheat) / (cooling
//   input + electric reheat input); reheat needed for the supply dew-point
//   target = min(reheat, m cp (t_sup - fan - T_c)), T_c = min(t_in, t_sup -
//   fan, T_req), T_req the coil leaving temperature at which this coil
//   (bypass model) leaves air at the target's humidity ratio; shortfall =
//   m (W_out - W_target) where the coil leaves air wetter than the target.
'use strict';
const fs = require('fs');
const path = require('path');
const dir = process.env.DEWLINE_PSYCHROLIB;
if (!dir) { console.error('DEWLINE_PSYCHROLIB is not set'); process.exit(2); }
const mod = require(path.join(dir, 'psychrolib.js'));
const psy = mod.SetUnitSystem ? mod : new mod();
psy.SetUnitSystem(psy.SI);

const out = process.argv[2];
if (!out) { console.error('usage: node fieldtruth.js OUT_DIR'); process.exit(2); }
fs.mkdirSync(out, { recursive: true });

const P = 101325, RHO_STD = 1.204;
let seed = 20261101;
const rand = () => { seed = (seed * 1664525 + 1013904223) % 4294967296; return seed / 4294967296; };
const gauss = () => { let s = 0; for (let i = 0; i < 6; i++) s += rand(); return (s - 3) * Math.SQRT2; };

// Time: 2026-10-28 00:00 CDT (05:00 UTC) for seven local days; clocks go
// back at 2026-11-01 07:00 UTC (02:00 CDT -> 01:00 CST).
const T0 = Date.UTC(2026, 9, 28, 5, 0, 0);
const FALLBACK = Date.UTC(2026, 10, 1, 7, 0, 0);
const MINUTES = 7 * 1440 + 60;
const pad = (n) => String(n).padStart(2, '0');
const localOf = (ms) => new Date(ms - (ms < FALLBACK ? 5 : 6) * 3600e3);
const wall = (ms) => { const d = localOf(ms); return `${d.getUTCFullYear()}-${pad(d.getUTCMonth() + 1)}-${pad(d.getUTCDate())} ${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}:${pad(d.getUTCSeconds())}`; };
const localHour = (ms) => { const d = localOf(ms); return d.getUTCHours() + d.getUTCMinutes() / 60; };
const localDay = (ms) => Math.floor((localOf(ms).getTime() - Date.UTC(2026, 9, 28)) / 86400e3);

// Weather: outdoor dry bulb and dew point, with a dry spell from local
// 30 Oct 06:00 to 1 Nov 12:00 (ramps of six hours at both ends).
const DRY_FROM = Date.UTC(2026, 9, 30, 11), DRY_TO = Date.UTC(2026, 10, 1, 18);
function weather(ms) {
  const h = localHour(ms);
  const ramp = (a, b) => Math.min(1, Math.max(0, (ms - a) / (b - a)));
  const dry = ramp(DRY_FROM, DRY_FROM + 6 * 3600e3) * (1 - ramp(DRY_TO, DRY_TO + 6 * 3600e3));
  const day = localDay(ms);
  const tMean = 27 - 8 * dry + 0.8 * Math.sin(day * 1.7);
  const t = tMean + 4.5 * Math.sin(2 * Math.PI * (h - 9) / 24) + 0.3 * Math.sin(ms / 7.7e5);
  const td = 20.5 - 13 * dry + 0.8 * Math.sin(day * 2.3 + h / 5) + 0.4 * Math.sin(ms / 2.9e6);
  return { t, w: psy.GetHumRatioFromTDewPoint(Math.min(td, t - 0.5), P) };
}

const hk = (t, w) => psy.GetMoistAirEnthalpy(t, w) / 1000; // kJ/kg
const cpm = (w) => 1.006 + 1.86 * w;
const wsat = (t) => psy.GetSatHumRatio(t, P);

// Bypass-factor coil: leaving dry bulb tLv from entering (tIn, wIn).
function coilW(tIn, wIn, tLv, bf) {
  if (tLv >= tIn) return wIn;
  const adp = (tLv - bf * tIn) / (1 - bf);
  const ws = wsat(adp);
  if (ws >= wIn) return wIn; // the coil surface is above the entering dew point: dry
  return ws + bf * (wIn - ws);
}
// The leaving temperature at which this coil leaves air at wTarget.
function coilTReq(tIn, wIn, wTarget, bf) {
  if (wIn <= wTarget) return Infinity;
  let lo = -5, hi = tIn;
  for (let i = 0; i < 60; i++) {
    const mid = (lo + hi) / 2;
    if (coilW(tIn, wIn, mid, bf) > wTarget) hi = mid; else lo = mid;
  }
  return lo;
}

const units = [
  { id: 'AHU-1', bf: 0.08, flowDay: 4.2, flowNight: 2.6, oaMin: 0.3, oaOcc: 0.3, targetTd: 12, fan: 0.6, reheat: 'electric',
    cool: 'dx', eer: 11.2, eerPerK: -0.12, capKW: 150, swing: 3.0, supSet: 17.5, gainOcc: 0.0011, gainUnocc: 0.0004 },
  { id: 'AHU-2', bf: 0.12, flowDay: 3.4, flowNight: 2.2, oaMin: 0.25, oaOcc: 0.35, targetTd: 11, fan: 0, reheat: 'hot_water', boiler: 0.82,
    cool: 'chw', kwPerTon: 0.9, swing: 0, supSet: 16.5, gainOcc: 0.0010, gainUnocc: 0.0003 },
  { id: 'AHU-3', bf: 0.07, flowDay: 5.0, flowNight: 3.0, oaMin: 0.3, oaOcc: 0.42, economizer: true, targetTd: 12, fan: 0, reheat: 'electric',
    cool: 'dx', eer: 10.5, eerPerK: -0.1, capKW: 190, fanKWPerM3s: 0.8, swing: 0, supSet: 17, gainOcc: 0.0012, gainUnocc: 0.0004 },
  { id: 'AHU-4', bf: 0.10, flowDay: 3.8, flowNight: 2.4, oaMin: 0.25, oaOcc: 0.3, targetTd: 12.5, fan: 0.6, reheat: 'electric',
    cool: 'dx', eer: 11, eerPerK: -0.1, capKW: 125, swing: 0, supSet: 17.5, gainOcc: 0.0011, gainUnocc: 0.0004 },
];
const STUCK_FROM = Date.UTC(2026, 10, 2, 16), STUCK_TO = Date.UTC(2026, 10, 2, 23); // AHU-1 entering RH, 10:00-17:00 CST

// Logging: a point is logged at an interval (minutes) or on change of value
// (deadband, with a heartbeat), with Gaussian noise and the controller's
// rounding. Samples are [ms, value].
function makeLogger(spec) {
  return { spec, samples: [], last: null, lastMs: -Infinity };
}
function logMinute(lg, m, ms, v) {
  const s = lg.spec;
  const read = (x) => {
    let y = x * (s.scale || 1) + (s.noise || 0) * gauss();
    if (s.clip !== undefined) y = Math.min(s.clip, y);
    return Math.round(y / s.quant) * s.quant;
  };
  if (s.every) {
    if (m % s.every === (s.offset || 0) % s.every) lg.samples.push([ms + (s.sec || 0) * 1000, read(v)]);
    return;
  }
  // change of value: the controller compares the reading with the last logged one
  const r = read(v);
  if (lg.last === null || Math.abs(r - lg.last) >= s.cov || ms - lg.lastMs >= s.heartbeat * 60e3) {
    const sec = Math.floor(rand() * 50) + 5;
    lg.samples.push([ms + sec * 1000, r]);
    lg.last = r; lg.lastMs = ms;
  }
}

// Point plans per unit: role -> column name and logging.
const plans = {
  'AHU-1': {
    entering_temp: { name: 'AHU-1 Mixed Air Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    entering_rh: { name: 'AHU-1 Mixed Air RH', every: 15, noise: 0.3, quant: 0.1, unit: '%' },
    leaving_temp: { name: 'AHU-1 Coil Leaving Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_temp: { name: 'AHU-1 Supply Air Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_flow: { name: 'AHU-1 Supply Flow', every: 5, noise: 10, quant: 1, unit: 'L/s' },
    reheat_kw: { name: 'AHU-1 Reheat kW', every: 1, noise: 0, quant: 0.01, unit: 'kW' },
    cooling_kw: { name: 'AHU-1 Compressor kW', every: 1, noise: 0, quant: 0.01, unit: 'kW' },
    outdoor_temp: { name: 'AHU-1 OA Temp', every: 15, noise: 0.05, quant: 0.1, unit: '°C' },
  },
  'AHU-2': {
    entering_temp: { name: 'AHU-2 MAT', every: 5, noise: 0.06, quant: 0.1, unit: '°C' },
    entering_rh: { name: 'AHU-2 MA RH', every: 5, noise: 0.3, quant: 0.1, unit: '%' },
    leaving_temp: { name: 'AHU-2 CLT', every: 5, noise: 0.06, quant: 0.1, unit: '°C' },
    leaving_rh: { name: 'AHU-2 CL RH', every: 5, noise: 1.2, quant: 0.1, clip: 100, unit: '%' },
    supply_temp: { name: 'AHU-2 SAT', every: 5, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_flow: { name: 'AHU-2 SA Flow', every: 5, noise: 10, quant: 1, unit: 'L/s' },
    outdoor_temp: { name: 'AHU-2 OAT', every: 15, noise: 0.05, quant: 0.1, unit: '°C' },
  },
  'AHU-3': {
    entering_temp: { name: 'AHU-3 Mixed Air Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    return_temp: { name: 'AHU-3 Return Air Temp', cov: 0.2, heartbeat: 30, noise: 0.06, quant: 0.1, unit: '°C' },
    return_rh: { name: 'AHU-3 Return Air RH', every: 15, noise: 0.3, quant: 0.1, unit: '%' },
    outdoor_temp: { name: 'AHU-3 OA Temp', every: 5, noise: 0.05, quant: 0.1, unit: '°C' },
    outdoor_rh: { name: 'AHU-3 OA RH', every: 5, noise: 0.5, quant: 0.1, unit: '%' },
    outdoor_flow: { name: 'AHU-3 OA Flow', every: 5, noise: 40, quant: 1, unit: 'L/s' },
    leaving_temp: { name: 'AHU-3 Coil Leaving Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_temp: { name: 'AHU-3 Supply Air Temp', every: 1, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_flow: { name: 'AHU-3 Supply Flow', every: 5, noise: 10, quant: 1, unit: 'L/s' },
    reheat_kw: { name: 'AHU-3 Reheat kW', every: 1, noise: 0, quant: 0.01, unit: 'kW' },
    fan_kw: { name: 'AHU-3 Supply Fan kW', every: 5, noise: 0.02, quant: 0.01, unit: 'kW' },
  },
  'AHU-4': {
    entering_temp: { name: 'AHU-4 MAT', every: 5, noise: 0.06, quant: 0.1, unit: '°C' },
    entering_rh: { name: 'AHU-4 MA RH', every: 5, noise: 0.3, quant: 0.1, unit: '%' },
    leaving_temp: { name: 'AHU-4 CLT', cov: 0.2, heartbeat: 30, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_temp: { name: 'AHU-4 SAT', cov: 0.2, heartbeat: 30, noise: 0.06, quant: 0.1, unit: '°C' },
    supply_flow: { name: 'AHU-4 SA Flow', every: 5, noise: 10, quant: 1, unit: 'L/s' },
    cooling_kw: { name: 'AHU-4 Compressor kW', every: 5, noise: 0, quant: 0.01, unit: 'kW' },
    outdoor_temp: { name: 'AHU-4 OAT', every: 15, noise: 0.05, quant: 0.1, unit: '°C' },
  },
};

const truthRows = [];
for (const u of units) {
  const plan = plans[u.id];
  const loggers = {};
  for (const role of Object.keys(plan)) loggers[role] = makeLogger(plan[role]);
  const wTarget = psy.GetHumRatioFromTDewPoint(u.targetTd, P);
  let wRa = 0.0105, tLv = 14, set = 16, tRaSlow = 23.5, stuckVal = null;
  let acc = null, hourStart = null;
  const flush = () => {
    if (!acc) return;
    const eer = acc.coolIn + acc.reheatElec > 0 && acc.coilOnMin >= 30 ? 3.412142 * (acc.coil - acc.reheat) / (acc.coolIn + acc.reheatElec) : NaN;
    truthRows.push([new Date(hourStart).toISOString().replace('.000Z', 'Z'), u.id, acc.water, acc.coil, acc.reheat, eer,
      acc.needed, acc.shortfall, acc.stuck ? 1 : 0, acc.dryAir, acc.coolIn, acc.wetMin,
      psy.GetTDewPointFromHumRatio(20, acc.wInSum / 60, P), psy.GetTDewPointFromHumRatio(20, acc.wOutSum / 60, P), acc.tLvSum / 60].join(','));
  };
  for (let m = 0; m < MINUTES; m++) {
    const ms = T0 + m * 60e3;
    if ((ms - T0) % 3600e3 === 0) { flush(); hourStart = ms; acc = { water: 0, coil: 0, reheat: 0, needed: 0, shortfall: 0, coolIn: 0, reheatElec: 0, dryAir: 0, coilOnMin: 0, stuck: false, wetMin: 0, wInSum: 0, wOutSum: 0, tLvSum: 0 }; }
    const lh = localHour(ms);
    const occ = lh >= 6 && lh < 20;
    const oa = weather(ms);
    // return air: space temperature with zone cycling, moisture from a first-order space
    tRaSlow = 23.5 + 0.4 * Math.sin(2 * Math.PI * (lh - 14) / 24);
    const tRa = tRaSlow + u.swing * Math.sin(2 * Math.PI * m / 20);
    let x = occ ? u.oaOcc : u.oaMin;
    // a dry-bulb economizer opens the damper when the outdoor air is cool and dry
    if (u.economizer && oa.t < tRa - 4 && oa.w < wRa) x = Math.min(0.7, x + 0.08 * (tRa - 4 - oa.t));
    const hMix = x * hk(oa.t, oa.w) + (1 - x) * hk(tRa, wRa);
    const wIn = x * oa.w + (1 - x) * wRa;
    const tIn = psy.GetTDryBulbFromEnthalpyAndHumRatio(hMix * 1000, wIn);
    const q = (occ ? u.flowDay : u.flowNight) * (1 + 0.02 * Math.sin(m / 37)); // m3/s standard air
    const mDa = RHO_STD * q;
    // a blow-through fan's heat reaches the coil: the coil's entering air
    const fanKW = (u.fanKWPerM3s || 0) * q;
    const tCoilIn = tIn + fanKW / (mDa * cpm(wIn));

    // coil leaving set point by unit
    const tReq = coilTReq(tCoilIn, wIn, wTarget, u.bf);
    const dry = ms > DRY_FROM + 3 * 3600e3 && ms < DRY_TO + 3 * 3600e3;
    let goal;
    switch (u.id) {
      case 'AHU-1': goal = occ ? 10.8 : 12.5; break;
      case 'AHU-2': goal = dry || !occ ? 14.5 : 10.8; break;
      case 'AHU-3': goal = 11.5; break;
      default: {
        const g = Number.isFinite(tReq) ? Math.min(16, Math.max(9, tReq - 0.8)) : 16;
        // the reset moves down at 0.45 K/h and up at 3 K/h: it lags after a dry spell
        const step = g < set ? Math.max(g - set, -0.45 / 60) : Math.min(g - set, 3 / 60);
        set += step;
        goal = set;
      }
    }
    const coilOn = goal < tCoilIn - 0.8;
    const tLvGoal = coilOn ? goal : tCoilIn;
    tLv += (tLvGoal - tLv) * (1 - Math.exp(-1 / 4)); // four-minute lag
    tLv = Math.min(tLv, tCoilIn);
    const wOut = coilW(tCoilIn, wIn, tLv, u.bf);
    const on = tCoilIn - tLv > 0.5;
    // reheat to the supply set point (its own 0.8 K deadband), then the fan
    let rise = u.supSet - u.fan - tLv;
    if (rise < 0.8) rise = 0;
    const tSup = tLv + rise + u.fan;
    const reheat = mDa * (hk(tLv + rise, wOut) - hk(tLv, wOut)); // kW
    const water = mDa * (wIn - wOut); // kg/s
    const coil = on ? mDa * (hk(tCoilIn, wIn) - hk(tLv, wOut)) - water * 4.186 * tLv : 0;
    let coolIn = 0;
    if (u.cool === 'dx') {
      const cop = Math.max(0.4, Math.min(1.6, 1 + (u.eerPerK * (oa.t - 35)) / u.eer)) * u.eer / 3.412142;
      // AHRI 210/240 part-load factor, Cd = 0.25 (the standard's default, memory)
      const plf = 1 - 0.25 * (1 - Math.min(1, Math.max(0, coil) / u.capKW));
      coolIn = Math.max(0, coil) / (cop * plf);
    } else {
      coolIn = Math.max(0, coil) * u.kwPerTon / 3.51685;
    }
    const reheatElec = u.reheat === 'electric' ? reheat : 0;
    // reheat needed for the target
    let needed = 0;
    if (rise > 0) {
      const tSupEff = tSup - u.fan;
      const tc = Math.min(tCoilIn, tSupEff, tReq);
      const wc = coilW(tCoilIn, wIn, tc, u.bf);
      needed = Math.min(reheat, Math.max(0, mDa * (hk(tSupEff, wc) - hk(tc, wc))));
    }
    const shortfall = wOut > wTarget && wIn > wTarget ? mDa * (wOut - wTarget) : 0;

    // space moisture: supply air plus the space gain, one-hour time constant
    wRa += (wOut + (occ ? u.gainOcc : u.gainUnocc) - wRa) * (1 - Math.exp(-1 / 60));

    acc.water += water * 60; acc.coil += coil / 60; acc.reheat += reheat / 60; acc.needed += needed / 60;
    acc.shortfall += shortfall * 60; acc.coolIn += coolIn / 60; acc.reheatElec += reheatElec / 60; acc.dryAir += mDa * 60;
    acc.wInSum += wIn; acc.wOutSum += wOut; acc.tLvSum += tLv;
    if (on) acc.coilOnMin++;
    if (wOut < wIn - 1e-7) acc.wetMin++;

    // what the sensors read
    const rh = (t, w) => 100 * psy.GetRelHumFromHumRatio(t, w, P);
    const truthOf = {
      entering_temp: tIn, entering_rh: rh(tIn, wIn), leaving_temp: tLv, leaving_rh: rh(tLv, wOut), supply_temp: tSup,
      supply_flow: q * 1000, reheat_kw: reheatElec, fan_kw: fanKW, cooling_kw: u.cool === 'dx' ? coolIn : 0, outdoor_temp: oa.t,
      outdoor_rh: rh(oa.t, oa.w), return_temp: tRa, return_rh: rh(tRa, wRa), outdoor_flow: x * q * 1000,
    };
    for (const role of Object.keys(plan)) {
      let v = truthOf[role];
      if (u.id === 'AHU-1' && role === 'entering_rh' && ms >= STUCK_FROM && ms < STUCK_TO) {
        if (stuckVal === null) stuckVal = Math.round(v * 10) / 10;
        const lg = loggers[role];
        if (m % 15 === 0) lg.samples.push([ms, stuckVal]);
        acc.stuck = true;
        continue;
      }
      logMinute(loggers[role], m, ms, v);
    }
  }
  flush();

  // the export: long layout, local wall time, samples of all points in time order
  const rows = [];
  for (const role of Object.keys(plan)) {
    const p = plan[role];
    for (const [ms, v] of loggers[role].samples) rows.push([ms, p.name, v, p.unit]);
  }
  rows.sort((a, b) => a[0] - b[0] || (a[1] < b[1] ? -1 : 1));
  const lines = ['Timestamp,Point,Value,Unit'];
  for (const [ms, name, v, unit] of rows) lines.push(`${wall(ms)},${name},${Number(v.toFixed(3))},${unit}`);
  fs.writeFileSync(path.join(out, u.id + '.csv'), lines.join('\n') + '\n');
}

fs.writeFileSync(path.join(out, 'truth.csv'),
  'hour_start,ahu,water_kg,coil_net_kwh,reheat_kwh,effective_eer_electric,reheat_needed_kwh,shortfall_kg,stuck,dry_air_kg,cooling_input_kwh,wet_minutes,entering_dewpoint_c,leaving_dewpoint_c,leaving_temp_c\n' +
  truthRows.join('\n') + '\n');

// The configuration: what a careful user writes for these units.
const pointsYaml = (id) => Object.entries(plans[id]).map(([role, p]) => `      ${role}: {point: "${p.name}", unit: "${p.unit}"}`).join('\n');
const cfg = `version: 1
site: {name: Gulf Clinic, timezone: America/Chicago, pressure: 101.325kPa, units: si}
grid:
  step: 1m
  stale: {return_temp: 45m, leaving_temp: 45m, supply_temp: 45m, outdoor_temp: 30m, outdoor_rh: 30m}
prices: {currency: USD, electricity_per_kwh: 0.12, fuel_per_kwh: 0.04}
air_handlers:
  - id: AHU-1
    cooling: {kind: dx, rated_eer: 11.2, rated_outdoor: 35C, eer_per_kelvin: -0.12, rated_capacity: 150kW}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: draw_through, heat_rise: 0.6K}
    target: {max_supply_dewpoint: 12C}
    points:
${pointsYaml('AHU-1')}
  - id: AHU-2
    cooling: {kind: chilled_water, plant_kw_per_ton: 0.9}
    reheat: {kind: hot_water, boiler_efficiency: 0.82}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_supply_dewpoint: 11C}
    points:
${pointsYaml('AHU-2')}
  - id: AHU-3
    cooling: {kind: dx, rated_eer: 10.5, rated_outdoor: 35C, eer_per_kelvin: -0.1, rated_capacity: 190kW}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: blow_through, entering_sensor: before_fan}
    outdoor_air: {min_fraction: 30%}
    target: {max_supply_dewpoint: 12C}
    points:
${pointsYaml('AHU-3')}
  - id: AHU-4
    cooling: {kind: dx, rated_eer: 11, rated_outdoor: 35C, eer_per_kelvin: -0.1, rated_capacity: 125kW}
    reheat: {kind: electric}
    airflow: {basis: standard}
    fan: {position: draw_through, heat_rise: 0.6K}
    leaving_rh: 93%                # from a commissioning spot check of the coil
    target: {max_supply_dewpoint: 12.5C}
    points:
${pointsYaml('AHU-4')}
`;
fs.writeFileSync(path.join(out, 'config.yaml'), cfg);
