package grafana

import (
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
	"go.yaml.in/yaml/v3"
)

// TestFiles_Committed: the committed JSON is what the definition generates
// ("go generate ./deploy/grafana" rewrites it).
func TestFiles_Committed(t *testing.T) {
	files, err := Files()
	require.NoError(t, err)
	require.Len(t, files, len(Flavours)*len(Names))
	for name, want := range files {
		got, err := os.ReadFile(name)
		require.NoError(t, err, "run go generate ./deploy/grafana")
		assert.Equal(t, string(want), string(got), "%s is stale: run go generate ./deploy/grafana", name)
	}
	on, err := filepath.Glob("dashboards/*/*.json")
	require.NoError(t, err)
	for _, p := range on {
		_, ok := files[p]
		assert.True(t, ok, "%s is not generated: remove it", p)
	}
}

// TestFiles_LoadWithSDK: every committed file reads back with the SDK's
// dashboard types; every panel has an InfluxDB query of its flavour on the
// ds variable's data source.
func TestFiles_LoadWithSDK(t *testing.T) {
	for _, f := range Flavours {
		for _, n := range Names {
			t.Run(string(f)+"/"+n, func(t *testing.T) {
				b, err := os.ReadFile(filepath.Join("dashboards", string(f), "dewline-"+n+".json"))
				require.NoError(t, err)
				d, err := Load(b)
				require.NoError(t, err)
				require.NotNil(t, d.Uid)
				assert.Equal(t, UID(n, f), *d.Uid)
				qs, err := Queries(d)
				require.NoError(t, err)
				require.NotEmpty(t, qs)
				panels := 0
				for _, p := range d.Panels {
					if p.Panel != nil {
						panels++
						assert.NotEmpty(t, p.Panel.Targets, "panel %v has a query", p.Panel.Title)
					}
				}
				assert.Len(t, qs, panels)
				for _, q := range qs {
					require.NoError(t, q.Query.Validate())
					require.NotNil(t, q.Query.Datasource)
					assert.Equal(t, "${ds}", *q.Query.Datasource.Uid)
					if f == InfluxQL {
						assert.True(t, q.Query.RawQuery, q.Panel)
						assert.Contains(t, q.Query.Query, "SELECT", q.Panel)
					} else {
						assert.Contains(t, q.Query.Query, "from(bucket: \"${bucket}\")", q.Panel)
					}
				}
				var names []string
				for _, v := range d.Templating.List {
					names = append(names, v.Name)
				}
				assert.Contains(t, names, "ds")
				if n != Overview {
					assert.Contains(t, names, "ahu")
				}
			})
		}
	}
}

// TestScope_Site: a site tag on the results is one entry of scopeTags: it
// adds a variable to every dashboard and a condition to every query.
func TestScope_Site(t *testing.T) {
	saved := scopeTags
	t.Cleanup(func() { scopeTags = saved })
	scopeTags = []scopeTag{{"site", "Site"}}
	for _, f := range Flavours {
		for _, n := range Names {
			d, err := Build(n, f)
			require.NoError(t, err)
			qs, err := Queries(d)
			require.NoError(t, err)
			for _, q := range qs {
				assert.Contains(t, q.Query.Query, "${site:regex}", "%s %s %s", f, n, q.Panel)
			}
			assert.NotEmpty(t, VariableQuery(d, "site"), "%s %s has a site variable", f, n)
			if n != Overview {
				assert.Contains(t, VariableQuery(d, "ahu"), "${site:regex}", "the air handlers of the chosen site")
			}
		}
	}
}

// TestProvisioning: the provisioning files name the dashboards' folders
// and the data source uids the dashboards start on.
func TestProvisioning(t *testing.T) {
	var dash struct {
		APIVersion int `yaml:"apiVersion"`
		Providers  []struct {
			Name    string `yaml:"name"`
			Type    string `yaml:"type"`
			Options struct {
				Path string `yaml:"path"`
			} `yaml:"options"`
		} `yaml:"providers"`
	}
	b, err := os.ReadFile("provisioning/dashboards/provider.yaml")
	require.NoError(t, err)
	require.NoError(t, yaml.Unmarshal(b, &dash))
	assert.Equal(t, 1, dash.APIVersion)
	var flavoursSeen []string
	for _, p := range dash.Providers {
		assert.Equal(t, "file", p.Type)
		flavoursSeen = append(flavoursSeen, filepath.Base(p.Options.Path))
	}
	sort.Strings(flavoursSeen)
	assert.Equal(t, []string{string(Flux), string(InfluxQL)}, flavoursSeen)

	var ds struct {
		APIVersion  int `yaml:"apiVersion"`
		Datasources []struct {
			UID      string            `yaml:"uid"`
			Type     string            `yaml:"type"`
			JSONData map[string]any    `yaml:"jsonData"`
			Secure   map[string]string `yaml:"secureJsonData"`
		} `yaml:"datasources"`
	}
	b, err = os.ReadFile("provisioning/datasources/influxdb.yaml")
	require.NoError(t, err)
	require.NoError(t, yaml.Unmarshal(b, &ds))
	uids := map[string]bool{}
	for _, d := range ds.Datasources {
		assert.Equal(t, DatasourceType, d.Type)
		uids[d.UID] = true
		for k, v := range d.Secure {
			assert.True(t, strings.HasPrefix(v, "${") && strings.HasSuffix(v, "}"), "secret %s comes from the environment, not the file", k)
		}
	}
	for _, f := range Flavours {
		assert.True(t, uids[DatasourceUID(f)], "a data source with uid %s", DatasourceUID(f))
	}
}
