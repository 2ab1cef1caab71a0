package metrics

import (
	"encoding/json"
	"math"
	"strconv"
)

// Num is a number that encodes NaN and ±Inf as JSON null (encoding/json
// refuses them), rounded to six significant digits: the JSON form of the
// figures the dashboard's API and the comparison write.
type Num float64

// MarshalJSON writes null for a missing value.
func (n Num) MarshalJSON() ([]byte, error) {
	v := float64(n)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, roundSig(v, 6), 'g', -1, 64), nil
}

// UnmarshalJSON reads null as NaN.
func (n *Num) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*n = Num(math.NaN())
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*n = Num(v)
	return nil
}

// roundSig keeps sig significant digits.
func roundSig(v float64, sig int) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	p := math.Pow(10, float64(sig)-math.Ceil(math.Log10(math.Abs(v))))
	return math.Round(v*p) / p
}
