package config

import (
	"github.com/dewline/dewline/ingest/csvfile"
)

// CSVOptions are the export reading options the configuration gives.
func (c *Config) CSVOptions() csvfile.Options {
	e := c.Exports
	o := csvfile.Options{Location: c.Location, TimeColumn: e.TimeColumn, Year: e.Year}
	switch e.Layout {
	case "wide":
		o.Layout = csvfile.LayoutWide
	case "long":
		o.Layout = csvfile.LayoutLong
	}
	switch e.Delimiter {
	case ",", ";", "|":
		o.Delimiter = rune(e.Delimiter[0])
	case "tab":
		o.Delimiter = '\t'
	}
	tri := func(s string) csvfile.Tri {
		switch s {
		case "yes":
			return csvfile.Yes
		case "no":
			return csvfile.No
		}
		return csvfile.Auto
	}
	o.DecimalComma, o.DayFirst = tri(e.DecimalComma), tri(e.DayFirst)
	o.Settings = csvfile.Settings{Delimiter: "exports.delimiter", DecimalComma: "exports.decimal_comma",
		DayFirst: "exports.day_first", TimeColumn: "exports.time_column", Location: "site.timezone"}
	return o
}
