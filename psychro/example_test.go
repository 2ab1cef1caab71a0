package psychro_test

import (
	"fmt"

	"github.com/dewline/dewline/psychro"
)

func ExampleNewStateRH() {
	p, _ := psychro.PressureFromAltitude(300) // m
	s, err := psychro.NewStateRH(24, 0.50, p)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("W %.5f kg/kg, dew point %.2f °C, wet bulb %.2f °C, h %.2f kJ/kg\n",
		s.HumRatio, s.DewPointC, s.WetBulbC, s.EnthalpyKJPerKg)
	// Output: W 0.00964 kg/kg, dew point 12.95 °C, wet bulb 16.98 °C, h 48.69 kJ/kg
}

func ExampleCoil() {
	in, _ := psychro.NewStateRH(26, 0.55, psychro.StandardPressurePa)
	out, _ := psychro.CoilLeaving(in, 12, psychro.DefaultLeavingRH)
	load, _ := psychro.Coil(2.0, in, out) // 2 kg/s of dry air
	fmt.Printf("water %.1f kg/h, sensible %.1f kW, latent %.1f kW, total %.1f kW\n",
		load.Water*3600, load.Sensible, load.Latent, load.Total)
	// Output: water 23.6 kg/h, sensible 28.8 kW, latent 16.2 kW, total 45.0 kW
}

func ExampleNewStateRH_outOfRange() {
	_, err := psychro.NewStateRH(24, 1.2, psychro.StandardPressurePa)
	fmt.Println(err)
	// Output: relative humidity (fraction) = 1.2: must be between 0 and 1 (0-100 %)
}
