package deploy

import (
	"bufio"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

const dockerfilePath = "docker/Dockerfile"

// distrolessNonrootUID is the uid of the "nonroot" user of the distroless
// images (their README: "nonroot", uid 65532; recalled from memory). The
// StatefulSet runs as it, so that runAsNonRoot can verify a numeric user.
const distrolessNonrootUID = 65532

// dockerInstr is one Dockerfile instruction, continuation lines joined.
type dockerInstr struct {
	cmd  string // upper case
	args string
	line int
}

// parseDockerfile reads the instructions of a Dockerfile: comments (and
// parser directives) and blank lines are skipped, lines ending in a
// backslash are joined with the next.
func parseDockerfile(t *testing.T, file string) []dockerInstr {
	t.Helper()
	f, err := os.Open(file)
	require.NoError(t, err)
	defer f.Close()
	var out []dockerInstr
	var cur strings.Builder
	start := 0
	sc := bufio.NewScanner(f)
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		if cur.Len() == 0 && (line == "" || strings.HasPrefix(line, "#")) {
			continue
		}
		if cur.Len() == 0 {
			start = n
		}
		if more, ok := strings.CutSuffix(line, `\`); ok {
			cur.WriteString(more + " ")
			continue
		}
		cur.WriteString(line)
		cmd, args, _ := strings.Cut(cur.String(), " ")
		out = append(out, dockerInstr{cmd: strings.ToUpper(cmd), args: strings.TrimSpace(args), line: start})
		cur.Reset()
	}
	require.NoError(t, sc.Err())
	require.Zero(t, cur.Len(), "%s ends in a continuation", file)
	return out
}

// dockerStage is one FROM ... section.
type dockerStage struct {
	image, name string
	instrs      []dockerInstr
}

func dockerStages(t *testing.T) []dockerStage {
	t.Helper()
	var stages []dockerStage
	for _, in := range parseDockerfile(t, dockerfilePath) {
		if in.cmd == "FROM" {
			f := strings.Fields(in.args)
			require.NotEmpty(t, f, "%s:%d: FROM without an image", dockerfilePath, in.line)
			st := dockerStage{image: f[0]}
			if len(f) == 3 && strings.EqualFold(f[1], "AS") {
				st.name = f[2]
			}
			stages = append(stages, st)
			continue
		}
		require.NotEmpty(t, stages, "%s:%d: %s before FROM", dockerfilePath, in.line, in.cmd)
		stages[len(stages)-1].instrs = append(stages[len(stages)-1].instrs, in)
	}
	return stages
}

// dockerEntrypoint returns the binary path of the final stage's ENTRYPOINT,
// which must be in exec (JSON) form.
func dockerEntrypoint(t *testing.T) string {
	t.Helper()
	stages := dockerStages(t)
	require.NotEmpty(t, stages)
	var ep []string
	for _, in := range stages[len(stages)-1].instrs {
		if in.cmd == "ENTRYPOINT" {
			require.NoError(t, json.Unmarshal([]byte(in.args), &ep), "%s:%d: ENTRYPOINT in exec form, [\"/path\"]: a distroless image has no shell", dockerfilePath, in.line)
		}
	}
	require.NotEmpty(t, ep, "the final stage has no ENTRYPOINT")
	return ep[0]
}

// goVersion reads the go directive of go.mod ("1.26.8" -> "1.26").
func goVersion(t *testing.T) string {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(moduleRoot, "go.mod"))
	require.NoError(t, err)
	m := regexp.MustCompile(`(?m)^go (\d+\.\d+)`).FindSubmatch(b)
	require.NotNil(t, m, "go.mod has no go directive")
	return string(m[1])
}

// TestDeploy_Dockerfile: a Go build stage with cgo off for the module's Go
// version, then a distroless static image that runs the binary as nonroot
// from the path the unit and the manifests use.
func TestDeploy_Dockerfile(t *testing.T) {
	stages := dockerStages(t)
	require.GreaterOrEqual(t, len(stages), 2, "multi-stage: build, then run")
	build, final := stages[0], stages[len(stages)-1]

	// Build stage: the golang image of go.mod's version, CGO_ENABLED=0.
	assert.Regexp(t, `^(docker\.io/library/)?golang:`+regexp.QuoteMeta(goVersion(t))+`([.-]|$)`, build.image,
		"the build image's Go version is go.mod's %s", goVersion(t))
	require.NotEmpty(t, build.name, "the build stage is named (FROM ... AS build)")
	out := ""
	for _, in := range build.instrs {
		if in.cmd == "RUN" && strings.Contains(in.args, "go build") {
			assert.Contains(t, in.args, "CGO_ENABLED=0", "%s:%d: a static binary for a distroless image", dockerfilePath, in.line)
			assert.Contains(t, in.args, "./cmd/dewline", "%s:%d", dockerfilePath, in.line)
			m := regexp.MustCompile(`-o\s+(\S+)`).FindStringSubmatch(in.args)
			require.NotNil(t, m, "%s:%d: go build -o OUT", dockerfilePath, in.line)
			out = m[1]
		}
	}
	require.NotEmpty(t, out, "the build stage runs go build -o OUT ./cmd/dewline")

	// Final stage: distroless static, the binary copied from the build,
	// a nonroot user, the entry point.
	assert.Regexp(t, `^gcr\.io/distroless/static(-debian\d+)?(:|@)`, final.image, "the final image is distroless static")
	entry := dockerEntrypoint(t)
	assert.Equal(t, "/usr/local/bin/dewline", entry, "the path the unit's ExecStart and the manifests use")
	var copied, user string
	for _, in := range final.instrs {
		switch in.cmd {
		case "COPY":
			f := strings.Fields(in.args)
			if len(f) == 3 && f[0] == "--from="+build.name && f[1] == out {
				copied = f[2]
			}
		case "USER":
			user = in.args
		}
	}
	assert.Equal(t, entry, copied, "COPY --from=%s %s %s", build.name, out, entry)
	u, _, _ := strings.Cut(user, ":")
	assert.Contains(t, []string{"nonroot", "65532"}, u, "USER is the image's nonroot user")
	assert.FileExists(t, dockerfilePath+".dockerignore")
}
