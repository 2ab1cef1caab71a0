package psychro

// Unit conversion factors. Exact where the definition is exact (foot, pound,
// international-table Btu, grain); the others carry the digits of their
// defining constants.
const (
	MetrePerFoot     = 0.3048            // exact
	KgPerLb          = 0.45359237        // exact
	JoulePerBtu      = 1055.05585262     // international-table Btu, exact
	PaPerPsi         = 6894.757293168361 // lbf/in², from the exact pound-force and inch
	PaPerInHg        = 3386.389          // inch of mercury at 0 °C (32 °F)
	GrainsPerLb      = 7000.0            // exact
	BtuPerHourPerKW  = 1000 / JoulePerBtu * 3600
	BtuPerHourPerTon = 12000.0 // ton of refrigeration, by definition
	M3PerFt3         = MetrePerFoot * MetrePerFoot * MetrePerFoot
	M3sPerCFM        = M3PerFt3 / 60
	KJPerKWh         = 3600.0
)

// FToC converts °F to °C.
func FToC(tF float64) float64 { return (tF - 32) / 1.8 }

// CToF converts °C to °F.
func CToF(tC float64) float64 { return tC*1.8 + 32 }

// KToC converts kelvin to °C.
func KToC(tK float64) float64 { return tK - ZeroCelsiusK }

// CToK converts °C to kelvin.
func CToK(tC float64) float64 { return tC + ZeroCelsiusK }

// DeltaFToK converts a temperature difference in °F (°R) to kelvin.
func DeltaFToK(dF float64) float64 { return dF / 1.8 }

// PsiToPa converts lbf/in² to Pa.
func PsiToPa(psi float64) float64 { return psi * PaPerPsi }

// PaToPsi converts Pa to lbf/in².
func PaToPsi(pa float64) float64 { return pa / PaPerPsi }

// InHgToPa converts inches of mercury (0 °C) to Pa.
func InHgToPa(inHg float64) float64 { return inHg * PaPerInHg }

// FtToM converts feet to metres.
func FtToM(ft float64) float64 { return ft * MetrePerFoot }

// MToFt converts metres to feet.
func MToFt(m float64) float64 { return m / MetrePerFoot }

// CFMToM3s converts ft³/min to m³/s.
func CFMToM3s(cfm float64) float64 { return cfm * M3sPerCFM }

// M3sToCFM converts m³/s to ft³/min.
func M3sToCFM(m3s float64) float64 { return m3s / M3sPerCFM }

// LsToM3s converts L/s to m³/s.
func LsToM3s(ls float64) float64 { return ls / 1000 }

// M3hToM3s converts m³/h to m³/s.
func M3hToM3s(m3h float64) float64 { return m3h / 3600 }

// BtuToKJ converts Btu to kJ.
func BtuToKJ(btu float64) float64 { return btu * JoulePerBtu / 1000 }

// KJToBtu converts kJ to Btu.
func KJToBtu(kj float64) float64 { return kj * 1000 / JoulePerBtu }

// KWhToKJ converts kWh to kJ.
func KWhToKJ(kwh float64) float64 { return kwh * KJPerKWh }

// KJToKWh converts kJ to kWh.
func KJToKWh(kj float64) float64 { return kj / KJPerKWh }

// KWhToBtu converts kWh to Btu.
func KWhToBtu(kwh float64) float64 { return KJToBtu(KWhToKJ(kwh)) }

// BtuhToKW converts Btu/h to kW.
func BtuhToKW(btuh float64) float64 { return btuh / BtuPerHourPerKW }

// KWToBtuh converts kW to Btu/h.
func KWToBtuh(kw float64) float64 { return kw * BtuPerHourPerKW }

// TonsToKW converts tons of refrigeration to kW.
func TonsToKW(tons float64) float64 { return BtuhToKW(tons * BtuPerHourPerTon) }

// KWToTons converts kW to tons of refrigeration.
func KWToTons(kw float64) float64 { return KWToBtuh(kw) / BtuPerHourPerTon }

// LbToKg converts pounds (mass) to kg.
func LbToKg(lb float64) float64 { return lb * KgPerLb }

// KgToLb converts kg to pounds (mass).
func KgToLb(kg float64) float64 { return kg / KgPerLb }

// GrainsToKg converts grains to kg.
func GrainsToKg(gr float64) float64 { return gr / GrainsPerLb * KgPerLb }

// HumRatioToGrainsPerLb converts a humidity ratio (kg/kg = lb/lb) to grains per lb of dry air.
func HumRatioToGrainsPerLb(w float64) float64 { return w * GrainsPerLb }

// GrainsPerLbToHumRatio converts grains per lb of dry air to a humidity ratio.
func GrainsPerLbToHumRatio(gr float64) float64 { return gr / GrainsPerLb }

// COPToEER converts a coefficient of performance (W/W) to an energy
// efficiency ratio in Btu/Wh.
func COPToEER(cop float64) float64 { return cop * BtuPerHourPerKW / 1000 }

// EERToCOP converts an EER in Btu/Wh to a COP (W/W).
func EERToCOP(eer float64) float64 { return eer * 1000 / BtuPerHourPerKW }

// KWPerTonToCOP converts a chiller-plant efficiency in kW/ton to a COP.
func KWPerTonToCOP(kwPerTon float64) float64 { return TonsToKW(1) / kwPerTon }
