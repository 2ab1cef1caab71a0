package embedded

import (
	"path/filepath"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/ingest"
)

// TestStore_OneSitePerFile: one file holds one site. A file from before
// the site was recorded (schema v3) keeps its data and is claimed by the
// first site that opens it read-write; another site is refused, read-write
// and read-only, with the two ways out; the claiming site opens it again.
func TestStore_OneSitePerFile(t *testing.T) {
	ctx := testCtx(t)
	path := filepath.Join(t.TempDir(), "dewline.db")
	// A v3 file with a sample in it, as an older dewline left it.
	s, err := open(ctx, path, Options{}, migrations[:3])
	require.NoError(t, err)
	require.NoError(t, s.Close())
	writeRowSamples(t, path, "AHU-1 SAT", []ingest.Sample{{Time: t0, Value: 13}})
	assert.Equal(t, 3, pragmaInt(t, plainDB(t, path), "user_version"))

	s, err = Open(ctx, path, Options{Site: "north"})
	require.NoError(t, err)
	site, err := s.Site(ctx)
	require.NoError(t, err)
	assert.Equal(t, "north", site, "the upgraded file is claimed by the site that opened it")
	info, err := s.SeriesInfo(ctx, "AHU-1 SAT")
	require.NoError(t, err)
	assert.Equal(t, 1, info.Count, "its data kept")
	require.NoError(t, s.Close())

	for _, tc := range []struct {
		name     string
		readOnly bool
	}{{"read-write", false}, {"read-only", true}} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Open(ctx, path, Options{Site: "south", ReadOnly: tc.readOnly})
			require.ErrorIs(t, err, ErrOtherSite)
			for _, want := range []string{path, `site "north"`, `site "south"`, "its own file (store.path)", `set site.id to "north"`} {
				assert.Contains(t, err.Error(), want)
			}
			s, err := Open(ctx, path, Options{Site: "north", ReadOnly: tc.readOnly})
			require.NoError(t, err)
			require.NoError(t, s.Close())
		})
	}

	// A fresh file opened read-only by a site claims nothing.
	fresh := filepath.Join(t.TempDir(), "fresh.db")
	s, err = Open(ctx, fresh, Options{})
	require.NoError(t, err)
	require.NoError(t, s.Close())
	s, err = Open(ctx, fresh, Options{Site: "north", ReadOnly: true})
	require.NoError(t, err)
	site, err = s.Site(ctx)
	require.NoError(t, err)
	assert.Empty(t, site)
	require.NoError(t, s.Close())
}
