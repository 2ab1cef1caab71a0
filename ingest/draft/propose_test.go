package draft

import (
	"bytes"
	"fmt"
	"sort"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
)

// outcome is what a proposal did with one point.
type outcome struct {
	ahu, role, unit string
	conf            Confidence
}

// outcomes lists per point key what the proposal made of it; a point
// mapped to several air handlers as a site-wide one reads ahu "*".
func outcomes(p *Proposal) map[string]outcome {
	out := map[string]outcome{}
	for _, a := range p.AirHandlers {
		for _, m := range a.Mappings {
			k := fixtureKey(m.Point)
			o := outcome{ahu: a.ID, role: string(m.Role), unit: m.Unit, conf: m.Conf}
			if m.Shared {
				o.ahu = "*"
			}
			out[k] = o
		}
	}
	for _, u := range p.Unassigned {
		out[fixtureKey(u.Point)] = outcome{ahu: u.AHU, role: "none"}
	}
	return out
}

// TestPropose_Fixtures: the invented buildings of testdata/draft, each in
// its own naming style, against their hand-written roles. At least 95 % of
// the points must get their role (and air handler, and unit where the
// expectation gives one) right across them, and no wrong mapping may be
// written above Low confidence.
func TestPropose_Fixtures(t *testing.T) {
	want := loadExpected(t)
	totalN, totalRight := 0, 0
	var silent []string
	for _, fx := range fixtures {
		t.Run(fx.file, func(t *testing.T) {
			exp, ok := want[fx.file]
			require.True(t, ok, "expected.yaml has no section for %s", fx.file)
			prop := Propose(loadFixture(t, fx.file), Options{})
			got := outcomes(prop)
			keys := make([]string, 0, len(got))
			for k := range got {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			for _, k := range keys {
				_, listed := exp[k]
				assert.True(t, listed, "point %q is not in expected.yaml", k)
			}
			right := 0
			for k, e := range exp {
				g, ok := got[k]
				if !assert.True(t, ok, "point %q was not read", k) {
					continue
				}
				ok = g.role == e.Role
				if ok && e.Role != "none" {
					ok = g.ahu == e.AHU && (e.Unit == "" || g.unit == e.Unit) && (!e.Low || g.conf == Low)
				}
				if ok {
					right++
					continue
				}
				t.Logf("wrong: %s: got %s/%s [%s] (%s), want %s/%s [%s]", k, g.ahu, g.role, g.unit, g.conf, e.AHU, e.Role, e.Unit)
				if g.role != "none" && g.conf > Low {
					silent = append(silent, fmt.Sprintf("%s %s: %s/%s at %s confidence", fx.file, k, g.ahu, g.role, g.conf))
				}
			}
			t.Logf("%s (%s): %d of %d points right (%.1f %%)", fx.file, fx.style, right, len(exp), 100*float64(right)/float64(len(exp)))
			totalN += len(exp)
			totalRight += right

			// The written configuration is accepted as it is.
			var buf bytes.Buffer
			require.NoError(t, prop.Write(&buf, Site{Name: "fixture", TimeZone: "UTC", Sources: []string{fx.file}}))
			cfg, err := config.Parse(bytes.NewReader(buf.Bytes()), fx.file)
			require.NoError(t, err, buf.String())
			assert.Len(t, cfg.AirHandlers, 2, "every fixture building has two complete air handlers")
		})
	}
	share := float64(totalRight) / float64(totalN)
	t.Logf("all fixtures: %d of %d points right (%.1f %%)", totalRight, totalN, 100*share)
	assert.GreaterOrEqual(t, share, 0.95)
	assert.Empty(t, silent, "wrong mappings not marked LOW")
}
