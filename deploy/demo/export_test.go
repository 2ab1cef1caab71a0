package demo

// HourTruth is the generator's own account of one air handler-hour,
// exported for the tests.
type HourTruth = hourTruth

// Truth returns the generator's hourly account of unit k (the order of
// Scenario.Units), one entry per UTC hour from Scenario.From.
func Truth(sc *Scenario, k int) []HourTruth { return sc.truth[k] }
