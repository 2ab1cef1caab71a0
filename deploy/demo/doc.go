// Package demo writes an invented demonstration scenario for dewline: trend
// exports of five air handlers in a humid climate and a configuration that
// reads them, so that the whole job (check, import, analyse, alerts) can be
// shown on data that looks like a real building's without being one.
//
// # The scenario
//
// Saltmarsh Point Clinic and Laboratory, in the town of Port Ardent on a
// humid, Gulf-coast-like shore, is invented: no real building, site,
// product or person stands behind it, and every reading is synthetic. The
// site keeps the America/Chicago time zone and sits 20 ft above sea level.
// By default the period runs three weeks from Monday 19 October 2026, so
// that it spans the end of daylight saving on Sunday 1 November 2026.
//
// Five air handlers, each with its own control behaviour and its own set
// of trended points:
//
//	AHU-1  clinic wing, 12,000 CFM, DX with a metered compressor, electric reheat.
//	       Good dew-point control: the coil leaving temperature is reset to
//	       what the zone dew-point target needs, reheat only makes up the
//	       supply temperature.
//	AHU-2  imaging suite, 10,000 CFM, DX (cooling input modelled from a rated
//	       EER), electric reheat, fan kW trended. The coil is held at 50 °F
//	       and the reheat holds a fixed 60 °F supply, whatever the humidity.
//	AHU-3  administration, 8,000 CFM, DX, electric reheat, entering dew point
//	       trended. A schedule fault keeps it running all night with the
//	       outdoor damper shut: the coil cools to 53 °F and the reheat warms
//	       the air back up while the air is already dry.
//	AHU-4  laboratory, 100 % outdoor air, chilled-water coil and hot-water
//	       reheat from a gas boiler (priced as fuel), actual-volume airflow,
//	       coil leaving RH trended, valve positions trended.
//	RTU-5  pharmacy and storage, a packaged rooftop unit with hot-gas
//	       (condenser heat) reheat in dehumidification mode: reheat is
//	       recovered heat, with no purchased energy.
//
// # The physics
//
// One-minute steps computed with dewline's psychro package: synthetic
// weather (a diurnal temperature cycle, muggy nights, two cold fronts that
// drop the dew point for a few days, rainy spells), occupancy schedules,
// mixed air from the outdoor fraction and the return, a zone with
// sensible and moisture gains and storage, a cooling coil whose leaving air
// is near saturation (min of the entering humidity ratio and the humidity
// ratio at the leaving temperature and 93-97 % RH), a reheat coil to a
// supply setpoint, supply-fan heat, DX compressor power from the coil load
// and an EER that worsens with outdoor temperature, chilled-water plant
// power, boiler fuel.
//
// # The logs
//
// The exports are written as a building controls system logs: temperatures
// and humidities as change-of-value samples (a deadband plus a heartbeat
// every 15 minutes) at each point's own second within the minute, power,
// airflow and valve positions every 5 minutes, timestamps in local wall
// time, so that the repeated hour of the daylight-saving change appears
// twice. The shapes differ between controllers: long files (time, point,
// value, unit) with ISO dates, one of them gzip-compressed, and a wide
// 5-minute export with month-first dates, AM/PM and a row of units. Three
// artefacts are put in on purpose: RTU-5's space RH sensor sticks for
// about two days (its controller believes it, too), AHU-4's controller
// goes offline for about six hours, and the daylight-saving change.
//
// The same Options give byte-identical files: all randomness comes from a
// PCG generator seeded from Options.Seed, and nothing reads the clock.
//
// The figures dewline reports for this scenario describe invented
// equipment; they illustrate the method and are no guidance for a real
// building, where changes to a control sequence need the engineer of
// record, the local codes and licensed practice.
package demo
