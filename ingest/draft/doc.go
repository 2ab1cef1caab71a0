// Package draft proposes a dewline configuration from what a building
// already logs: the series of CSV trend exports (header, optional unit row,
// values) or of an InfluxDB database (measurements, tag keys and values,
// fields).
//
// It groups points by air handler (an equipment identifier in the name such
// as AHU-2, RTU3 or ahu_04, or an equipment tag such as Haystack's equipRef
// or Brick's isPointOf), assigns each point a role of metrics.Roles from
// three kinds of evidence, and says which it used and how sure it is:
//
//   - open-standard tags where present: Project Haystack marker tags
//     ("discharge air temp sensor") and Brick classes
//     ("Supply_Air_Temperature_Sensor", "Mixed_Air_Humidity_Sensor");
//   - the name, split at separators, case changes and digits, with the
//     abbreviations of the trade (MAT, SAT, DAT, RAT, OAT, RH, DP, CFM,
//     CCLT, kW, VLV, ...) in any order;
//   - the values: their range decides or questions the unit (an "F" column
//     that reads like °C, an RH column in 0..1, kW against W), and their
//     spacing gives the logging interval.
//
// A mapping is High, Medium or Low confidence. Low means a guess a person
// must check: the written configuration marks it so, and tests hold that no
// wrong mapping is written with more than Low confidence. Points no role
// fits are listed with the reason (a set point, a return airflow, a
// status), never dropped silently. Return-air temperature and humidity get
// the return roles, so that a unit without a mixed-air humidity sensor has
// its entering air mixed from return and outdoor air. Equipment facts that trend names cannot
// tell (rated EER, boiler efficiency, humidity target, prices) are written
// as marked assumptions to be confirmed.
//
// Units: values stay as logged; units are names psychro knows.
//
// draft does no I/O of its own besides reading the exports it is given
// (ReadCSV) and querying InfluxDB through ingest/influx (ReadInflux); it
// never writes to a store and never logs.
package draft
