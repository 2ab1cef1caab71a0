package deploy

import (
	"bufio"
	"bytes"
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"github.com/dewline/dewline/agent/config"
	"github.com/dewline/dewline/deploy/demo"
)

// The tests run from deploy/; the module root is its parent.
const moduleRoot = ".."

var (
	binDir    string // holds the dewline binary built for these tests
	buildOnce sync.Once
	binPath   string
	buildErr  error
)

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "dewline-deploy-test-")
	if err != nil {
		fmt.Fprintln(os.Stderr, "deploy tests:", err)
		os.Exit(1)
	}
	binDir = dir
	code := m.Run()
	_ = os.RemoveAll(dir)
	os.Exit(code)
}

// dewlineBin builds ./cmd/dewline once per test run and returns its path.
// The command lines in the unit and the manifests are checked against this
// binary's own flag listing, so a renamed or removed flag fails here.
func dewlineBin(t *testing.T) string {
	t.Helper()
	buildOnce.Do(func() {
		binPath = filepath.Join(binDir, "dewline")
		cmd := exec.Command("go", "build", "-o", binPath, "./cmd/dewline")
		cmd.Dir = moduleRoot
		if out, err := cmd.CombinedOutput(); err != nil {
			buildErr = fmt.Errorf("go build ./cmd/dewline: %v\n%s", err, out)
		}
	})
	if buildErr != nil {
		t.Fatal(buildErr)
	}
	return binPath
}

// runDewline runs the built binary and returns its exit code and output.
func runDewline(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	var out, errOut bytes.Buffer
	cmd := exec.CommandContext(ctx, dewlineBin(t), args...)
	cmd.Stdout, cmd.Stderr = &out, &errOut
	err := cmd.Run()
	var ee *exec.ExitError
	switch {
	case err == nil:
	case errors.As(err, &ee):
		code = ee.ExitCode()
	default:
		t.Fatalf("run dewline %q: %v", args, err)
	}
	return code, out.String(), errOut.String()
}

// runFlag is one flag of "dewline run", as "dewline run -h" lists it.
type runFlag struct {
	isBool bool
	def    string // default value, "" when none is shown
}

var (
	runFlagsOnce sync.Once
	runFlagsList map[string]runFlag
)

// flagLine and defaultRE read the flag package's PrintDefaults layout:
//
//	-grace duration
//	    	on shutdown, ... (default 30s)
var (
	flagLine  = regexp.MustCompile(`^  -([A-Za-z0-9][A-Za-z0-9-]*)(?: (\S+))?$`)
	defaultRE = regexp.MustCompile(`\(default (\S+)\)\s*$`)
)

// runFlags returns the flags "dewline run -h" lists.
func runFlags(t *testing.T) map[string]runFlag {
	t.Helper()
	runFlagsOnce.Do(func() {
		code, out, errOut := runDewline(t, "run", "-h")
		require.Equal(t, 0, code, "dewline run -h: %s", errOut)
		flags := map[string]runFlag{}
		last := ""
		sc := bufio.NewScanner(strings.NewReader(out))
		for sc.Scan() {
			line := sc.Text()
			if m := flagLine.FindStringSubmatch(line); m != nil {
				last = m[1]
				flags[last] = runFlag{isBool: m[2] == ""}
				continue
			}
			if m := defaultRE.FindStringSubmatch(line); m != nil && last != "" {
				f := flags[last]
				f.def = m[1]
				flags[last] = f
			}
		}
		runFlagsList = flags
	})
	require.NotEmpty(t, runFlagsList, "dewline run -h listed no flags")
	require.Contains(t, runFlagsList, "config", "dewline run -h must list --config")
	return runFlagsList
}

// checkRunCommandLine checks a command line given to the dewline binary
// (without the binary itself): global flags, "run", then run flags. The
// global part must be accepted by the binary (it runs "dewline GLOBAL
// help"), and the run part must parse with exactly the flags "dewline run
// -h" lists, with a value for each flag that takes one and no stray
// argument. It returns every run flag's value (defaults included).
func checkRunCommandLine(t *testing.T, where string, args []string) map[string]string {
	t.Helper()
	i := slices.Index(args, "run")
	require.GreaterOrEqual(t, i, 0, "%s: no \"run\" command in %q", where, args)
	global := args[:i]
	code, _, errOut := runDewline(t, append(slices.Clone(global), "help")...)
	require.Equal(t, 0, code, "%s: dewline does not accept the global flags %q: %s", where, global, errOut)

	flags := runFlags(t)
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	for name, f := range flags {
		if f.isBool {
			fs.Bool(name, false, "")
		} else {
			fs.String(name, f.def, "")
		}
	}
	err := fs.Parse(args[i+1:])
	require.NoError(t, err, "%s: %q does not parse as the flags of dewline run (dewline run -h lists %s)", where, args[i+1:], flagNames(flags))
	require.Zero(t, fs.NArg(), "%s: stray arguments %q after the run flags", where, fs.Args())
	vals := map[string]string{}
	fs.VisitAll(func(f *flag.Flag) { vals[f.Name] = f.Value.String() })
	return vals
}

func flagNames(flags map[string]runFlag) string {
	names := make([]string, 0, len(flags))
	for n := range flags {
		names = append(names, "--"+n)
	}
	sort.Strings(names)
	return strings.Join(names, " ")
}

// secretEnvs returns the environment variables a configuration takes its
// secrets from, keyed by name, with the configuration key that names each.
func secretEnvs(cfg *config.Config) map[string]string {
	out := map[string]string{}
	if ic := cfg.Store.InfluxDB; ic != nil && ic.TokenEnv != "" {
		out[ic.TokenEnv] = "store.influxdb.token_env"
	}
	if cfg.HTTP.TokenEnv != "" {
		out[cfg.HTTP.TokenEnv] = "http.token_env"
	}
	if w := cfg.Webhook; w != nil && w.SecretEnv != "" {
		out[w.SecretEnv] = "webhook.secret_env"
	}
	return out
}

var envName = regexp.MustCompile(`^[A-Z][A-Z0-9_]*$`)

// checkSecretsFromEnv sets each secret's environment variable and checks
// that the code reads the secret through the name the configuration gives.
func checkSecretsFromEnv(t *testing.T, cfg *config.Config) {
	t.Helper()
	for name, key := range secretEnvs(cfg) {
		assert.Regexp(t, envName, name, "%s: environment variable names are upper case", key)
		want := "placeholder-" + strings.ToLower(name)
		t.Setenv(name, want)
		var got string
		var err error
		if key == "store.influxdb.token_env" {
			got, err = cfg.Store.InfluxDB.Token()
		} else {
			got, err = config.SecretFromEnv(key, name)
		}
		require.NoError(t, err, key)
		assert.Equal(t, want, got, "%s reads %s", key, name)
	}
}

// allSecretEnvNames is every secret environment variable named by the
// example configurations and the Kubernetes ConfigMap.
func allSecretEnvNames(t *testing.T) map[string]string {
	t.Helper()
	out := map[string]string{}
	files, err := filepath.Glob("examples/*.yaml")
	require.NoError(t, err)
	for _, f := range files {
		cfg, err := config.Load(f)
		require.NoError(t, err)
		for n, k := range secretEnvs(cfg) {
			out[n] = f + ": " + k
		}
	}
	k := loadKube(t)
	for n, key := range secretEnvs(k.config(t)) {
		out[n] = "kubernetes/configmap.yaml: " + key
	}
	return out
}

// TestDeploy_Examples: every example configuration loads, and reads its
// secrets from the environment variables it names.
func TestDeploy_Examples(t *testing.T) {
	files, err := filepath.Glob("examples/*.yaml")
	require.NoError(t, err)
	require.GreaterOrEqual(t, len(files), 3, "examples: dewline.yaml (IP), dewline-si.yaml, dewline-influx.yaml")
	kinds := map[string]bool{}
	units := map[string]bool{}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			cfg, err := config.Load(f)
			require.NoError(t, err)
			require.NotEmpty(t, cfg.AirHandlers)
			kinds[cfg.Store.Kind] = true
			units[cfg.Site.Units] = true
			checkSecretsFromEnv(t, cfg)
			// The same bytes through ParseConfig, as the ConfigMap is read.
			b, err := os.ReadFile(f)
			require.NoError(t, err)
			_, err = config.Parse(bytes.NewReader(b), f)
			require.NoError(t, err)
		})
	}
	assert.True(t, kinds["embedded"] && kinds["influxdb"], "examples cover both stores: %v", kinds)
	assert.True(t, units["si"] && units["ip"], "examples cover both unit systems: %v", units)
}

// exampleRef finds configuration file names in prose and comments.
var exampleRef = regexp.MustCompile(`\bdewline(?:-[a-z0-9]+)*\.yaml\b`)

// TestDeploy_ExampleReferences: every example configuration that a README
// or an example mentions exists.
func TestDeploy_ExampleReferences(t *testing.T) {
	var docs []string
	for _, pat := range []string{"examples/*.yaml", "*.md", "*/README.md", moduleRoot + "/README.md", moduleRoot + "/DEVELOPERS.md"} {
		m, err := filepath.Glob(pat)
		require.NoError(t, err)
		docs = append(docs, m...)
	}
	require.NotEmpty(t, docs)
	seen := 0
	for _, d := range docs {
		b, err := os.ReadFile(d)
		require.NoError(t, err)
		for _, name := range exampleRef.FindAllString(string(b), -1) {
			if name == demo.ConfigFile {
				continue // written by "dewline demo" into its folder, not an example
			}
			seen++
			assert.FileExists(t, filepath.Join("examples", name), "%s mentions %s", d, name)
		}
	}
	assert.Positive(t, seen, "no example was mentioned anywhere")
}

// commentRange finds a range in a comment: "lo..hi" (both bounds allowed)
// or "lo < x <= hi" (the lower bound excluded), bounds with or without a
// unit.
var commentRange = regexp.MustCompile(`(-?[0-9][0-9.]*[a-zA-Z%]*)\s*(\.\.|< x <=)\s*(-?[0-9][0-9.]*[a-zA-Z%]*)`)

// lastValue finds the last "key: value" before a comment, the key the
// comment speaks of (in a flow mapping too).
var lastValue = regexp.MustCompile(`([a-z_]+):\s*([^\s,{}#]+)[\s}]*$`)

// TestDeploy_ExampleRanges: a range stated in a comment of an example
// (or of the Kubernetes ConfigMap's configuration) is the one validation
// applies: each bound it allows loads, a bound it excludes is refused
// with the key's name.
func TestDeploy_ExampleRanges(t *testing.T) {
	texts := map[string]string{}
	files, err := filepath.Glob("examples/*.yaml")
	require.NoError(t, err)
	for _, f := range files {
		b, err := os.ReadFile(f)
		require.NoError(t, err)
		texts[f] = string(b)
	}
	k := loadKube(t)
	texts["kubernetes/configmap.yaml data."+k.configKey(t)] = k.cm.Data[k.configKey(t)]
	seen := 0
	for name, text := range texts {
		lines := strings.Split(text, "\n")
		for i, line := range lines {
			code, comment, ok := strings.Cut(line, "#")
			if !ok {
				continue
			}
			r := commentRange.FindStringSubmatch(comment)
			kv := lastValue.FindStringSubmatchIndex(code)
			if r == nil || kv == nil {
				continue
			}
			key := code[kv[2]:kv[3]]
			seen++
			with := func(v string) error {
				mutated := slices.Clone(lines)
				mutated[i] = code[:kv[4]] + v + code[kv[5]:] + "#" + comment
				_, err := config.Parse(strings.NewReader(strings.Join(mutated, "\n")), name)
				return err
			}
			t.Run(fmt.Sprintf("%s:%d %s", name, i+1, key), func(t *testing.T) {
				if r[2] == ".." {
					assert.NoError(t, with(r[1]), "%q says %s..%s: %s allowed", strings.TrimSpace(comment), r[1], r[3], r[1])
				} else if err := with(r[1]); assert.Error(t, err, "%q excludes %s", strings.TrimSpace(comment), r[1]) {
					assert.Contains(t, err.Error(), key)
				}
				assert.NoError(t, with(r[3]), "%q allows %s", strings.TrimSpace(comment), r[3])
			})
		}
	}
	assert.GreaterOrEqual(t, seen, 3, "no commented range found: the pattern no longer matches the examples")
}
