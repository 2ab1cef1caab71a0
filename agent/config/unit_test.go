package config

import (
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/metrics"
)

func TestConfig_Spec(t *testing.T) {
	cfg, err := Load("../../deploy/examples/dewline.yaml")
	require.NoError(t, err)
	a1, ok := cfg.AirHandler("AHU-1")
	require.True(t, ok)
	u := cfg.Spec(a1)
	assert.Equal(t, metrics.CoolingDX, u.Cooling)
	assert.InEpsilon(t, 11.2/3.412142, u.RatedCOP, 1e-5, "EER 11.2 Btu/Wh as a COP")
	assert.InDelta(t, 35, u.RatedOutdoorC, 1e-9, "95 °F rating point")
	assert.InDelta(t, -0.1/3.412142, u.COPPerK, 1e-6)
	assert.Equal(t, metrics.ReheatElectric, u.Reheat)
	assert.Equal(t, metrics.BasisStandard, u.Basis)
	assert.Equal(t, metrics.FanDrawThrough, u.Fan)
	assert.InDelta(t, 1/1.8, u.FanRiseK, 1e-12, "1 °F of fan heat")
	assert.Equal(t, metrics.TargetSpaceDewPoint, u.Target.Kind)
	assert.InDelta(t, (55-32)/1.8, u.Target.DewPointC, 1e-9)
	assert.InDelta(t, 0.13, u.Prices.ElectricityPerKWh, 1e-12)
	assert.Equal(t, metrics.DefaultAccuracy, u.Accuracy)

	a2, _ := cfg.AirHandler("AHU-2")
	u2 := cfg.Spec(a2)
	assert.Equal(t, metrics.CoolingChilledWater, u2.Cooling)
	assert.InDelta(t, 0.85/3.516853, u2.PlantKWPerKW, 1e-6)
	assert.Equal(t, metrics.ReheatHotWater, u2.Reheat)
	assert.InDelta(t, 0.82, u2.BoilerEff, 1e-12)
	assert.Equal(t, metrics.BasisActual, u2.Basis)
	assert.Equal(t, metrics.RoleSupplyTemp, u2.FlowAt)
	assert.Equal(t, metrics.TargetSpaceRH, u2.Target.Kind)
	assert.InDelta(t, 0.5, u2.Target.RH, 1e-12)
	assert.InDelta(t, (72-32)/1.8, u2.Target.SpaceTempC, 1e-9)
}

func TestConfig_SensorsAndAlerts(t *testing.T) {
	cfg, err := Load("../../testdata/config/minimal.good.yaml")
	require.NoError(t, err)
	cfg.Sensors = Sensors{Temperature: "0.5F", RH: "2%", Airflow: "10%"}
	a := cfg.Accuracy()
	assert.InDelta(t, 0.5/1.8, a.TempK, 1e-12)
	assert.InDelta(t, 0.02, a.RH, 1e-12)
	assert.InDelta(t, 0.10, a.FlowFrac, 1e-12)
	assert.InDelta(t, metrics.DefaultAccuracy.DewPointK, a.DewPointK, 1e-12)
	cfg.Alerts = Alerts{CoilMinLeaving: "48F", Overcooling: "2K"}
	p := cfg.RuleParams()
	assert.InDelta(t, (48-32)/1.8, p.CoilMinLeavingC, 1e-9)
	assert.InDelta(t, 2, p.OvercoolingK, 1e-12)
}
