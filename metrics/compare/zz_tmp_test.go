package compare

import (
	"fmt"
	"strconv"
	"testing"
)

func TestTmpZ(t *testing.T) {
	for seed := 1; seed <= 40; seed++ {
		r := analyseScenario(t, strconv.Itoa(seed))
		for _, i := range []int{0, 1, 2} {
			u := r.c.Units[i]
			for q := 0; q < nY; q++ {
				s := u.Model.Savings[q]
				if i == 0 {
					fmt.Printf("F %d %d %.2f %.2f\n", seed, q, float64(s.AvoidedPct), r.true[0][q])
					if q == 0 {
						fmt.Printf("N %d %.2f %.2f\n", seed, float64(s.Normalised.AvoidedPct), r.trueBefore[0])
					}
					continue
				}
				fmt.Printf("Z %d %s %d %.3f %.3f %.3f\n", seed, u.ID, q, float64(s.Avoided)/(s.U90Used()/1.645), float64(s.Avoided)/(float64(s.U90)/1.645), float64(s.Avoided)/(float64(s.RegU90)/1.645))
			}
			if i > 0 {
				fmt.Printf("C %d %s %s\n", seed, u.ID, u.Finding)
			}
		}
	}
}
