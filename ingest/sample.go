package ingest

import "time"

// Sample is one trend value in SI, at its logged time.
type Sample struct {
	Time  time.Time
	Value float64
}

// Record is one value as read from a trend export, before unit conversion:
// Series is the column header (wide layout) or point name (long layout),
// Unit the unit the file states for it ("" when it states none).
type Record struct {
	Series string
	Unit   string
	Time   time.Time
	Value  float64
	File   string
	Line   int
	// UnitLine is the line that states Unit when it is not Line: a wide
	// export's header or unit row; 0 when the record's own line does.
	UnitLine int
}
