package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"

	"github.com/dewline/dewline/psychro/airstate"
)

func runAir(_ context.Context, e *env, args []string) error {
	fs := flag.NewFlagSet("air", flag.ContinueOnError)
	var in airstate.Inputs
	fs.StringVar(&in.DryBulb, "db", "", "dry bulb, e.g. 75F or 24C (required)")
	fs.StringVar(&in.RH, "rh", "", "relative humidity, e.g. 50 or 50%")
	fs.StringVar(&in.DewPoint, "dp", "", "dew point, e.g. 55F or 13C")
	fs.StringVar(&in.WetBulb, "wb", "", "wet bulb, e.g. 62.5F or 17C")
	fs.StringVar(&in.HumRatio, "w", "", "humidity ratio, e.g. 0.0093 (kg/kg), 9.3g/kg or 65gr/lb")
	fs.StringVar(&in.Altitude, "altitude", "", "site altitude for the standard-atmosphere pressure, e.g. 300m or 1000ft")
	fs.StringVar(&in.Pressure, "pressure", "", "barometric pressure, e.g. 98.2kPa, 14.2psi or 29.1inHg (default: sea level)")
	fs.StringVar(&in.Units, "units", "auto", "display units: si, ip, or auto (those of --db)")
	asJSON := fs.Bool("json", false, "print one JSON object with SI values")
	fs.Usage = func() {
		fmt.Fprintln(fs.Output(), "usage: dewline air --db T (--rh RH | --dp T | --wb T | --w W) [--altitude Z | --pressure P] [--units si|ip] [--json]")
		fs.PrintDefaults()
	}
	if err := parseFlags(fs, args, e.stdout); err != nil {
		return err
	}
	air, err := airstate.Resolve(in)
	var ie *airstate.InputError
	if errors.As(err, &ie) {
		return usagef("%s", err)
	}
	if err != nil {
		return err
	}
	if air.Warning != "" {
		e.log.Warn().Str("rh", in.RH).Msg(air.Warning)
	}
	if *asJSON {
		b, err := airstate.JSON(air.State)
		if err != nil {
			return err
		}
		_, err = e.stdout.Write(b)
		return err
	}
	_, err = io.WriteString(e.stdout, airstate.Table(air.State, air.IP))
	return err
}
