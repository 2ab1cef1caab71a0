package deploy

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"path"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rs/zerolog"
	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
	"go.yaml.in/yaml/v3"

	"github.com/dewline/dewline/agent"
	"github.com/dewline/dewline/agent/config"

	"github.com/dewline/dewline/agent/server"

	"github.com/dewline/dewline/agent/telemetry"
)

const kubeDir = "kubernetes"

// The Kubernetes objects are decoded strictly into the subset of the API
// the manifests use, so a misspelt field fails here rather than being
// dropped. A field the manifests start to use must be added below.

type objectMeta struct {
	Name        string            `yaml:"name"`
	Namespace   string            `yaml:"namespace"`
	Labels      map[string]string `yaml:"labels"`
	Annotations map[string]string `yaml:"annotations"`
}

// intOrString is a port given by number or by name.
type intOrString string

func (v *intOrString) UnmarshalYAML(n *yaml.Node) error {
	if n.Kind != yaml.ScalarNode {
		return fmt.Errorf("line %d: want a port number or name", n.Line)
	}
	*v = intOrString(n.Value)
	return nil
}

type resourceList map[string]string

type resources struct {
	Requests resourceList `yaml:"requests"`
	Limits   resourceList `yaml:"limits"`
}

type seccompProfile struct {
	Type             string `yaml:"type"`
	LocalhostProfile string `yaml:"localhostProfile"`
}

type httpGetAction struct {
	Path        string      `yaml:"path"`
	Port        intOrString `yaml:"port"`
	Scheme      string      `yaml:"scheme"`
	HTTPHeaders []struct {
		Name  string `yaml:"name"`
		Value string `yaml:"value"`
	} `yaml:"httpHeaders"`
}

type probe struct {
	HTTPGet   *httpGetAction `yaml:"httpGet"`
	TCPSocket *struct {
		Port intOrString `yaml:"port"`
	} `yaml:"tcpSocket"`
	Exec *struct {
		Command []string `yaml:"command"`
	} `yaml:"exec"`
	InitialDelaySeconds int `yaml:"initialDelaySeconds"`
	PeriodSeconds       int `yaml:"periodSeconds"`
	TimeoutSeconds      int `yaml:"timeoutSeconds"`
	FailureThreshold    int `yaml:"failureThreshold"`
	SuccessThreshold    int `yaml:"successThreshold"`
}

type envVar struct {
	Name      string `yaml:"name"`
	Value     string `yaml:"value"`
	ValueFrom *struct {
		FieldRef *struct {
			FieldPath  string `yaml:"fieldPath"`
			APIVersion string `yaml:"apiVersion"`
		} `yaml:"fieldRef"`
		SecretKeyRef *struct {
			Name     string `yaml:"name"`
			Key      string `yaml:"key"`
			Optional *bool  `yaml:"optional"`
		} `yaml:"secretKeyRef"`
		ResourceFieldRef *struct {
			Resource string `yaml:"resource"`
			Divisor  string `yaml:"divisor"`
		} `yaml:"resourceFieldRef"`
	} `yaml:"valueFrom"`
}

type volumeMount struct {
	Name      string `yaml:"name"`
	MountPath string `yaml:"mountPath"`
	SubPath   string `yaml:"subPath"`
	ReadOnly  bool   `yaml:"readOnly"`
}

type container struct {
	Name            string   `yaml:"name"`
	Image           string   `yaml:"image"`
	ImagePullPolicy string   `yaml:"imagePullPolicy"`
	Command         []string `yaml:"command"`
	Args            []string `yaml:"args"`
	Env             []envVar `yaml:"env"`
	Ports           []struct {
		Name          string `yaml:"name"`
		ContainerPort int    `yaml:"containerPort"`
		Protocol      string `yaml:"protocol"`
	} `yaml:"ports"`
	LivenessProbe   *probe    `yaml:"livenessProbe"`
	ReadinessProbe  *probe    `yaml:"readinessProbe"`
	StartupProbe    *probe    `yaml:"startupProbe"`
	Resources       resources `yaml:"resources"`
	SecurityContext struct {
		AllowPrivilegeEscalation *bool  `yaml:"allowPrivilegeEscalation"`
		Privileged               *bool  `yaml:"privileged"`
		ReadOnlyRootFilesystem   *bool  `yaml:"readOnlyRootFilesystem"`
		RunAsNonRoot             *bool  `yaml:"runAsNonRoot"`
		RunAsUser                *int64 `yaml:"runAsUser"`
		RunAsGroup               *int64 `yaml:"runAsGroup"`
		Capabilities             struct {
			Add  []string `yaml:"add"`
			Drop []string `yaml:"drop"`
		} `yaml:"capabilities"`
		SeccompProfile seccompProfile `yaml:"seccompProfile"`
	} `yaml:"securityContext"`
	VolumeMounts []volumeMount `yaml:"volumeMounts"`
}

type volume struct {
	Name      string `yaml:"name"`
	ConfigMap *struct {
		Name        string `yaml:"name"`
		DefaultMode *int   `yaml:"defaultMode"`
		Items       []struct {
			Key  string `yaml:"key"`
			Path string `yaml:"path"`
		} `yaml:"items"`
	} `yaml:"configMap"`
	Secret *struct {
		SecretName string `yaml:"secretName"`
	} `yaml:"secret"`
	EmptyDir *struct {
		Medium    string `yaml:"medium"`
		SizeLimit string `yaml:"sizeLimit"`
	} `yaml:"emptyDir"`
	PersistentVolumeClaim *struct {
		ClaimName string `yaml:"claimName"`
	} `yaml:"persistentVolumeClaim"`
}

type podSpec struct {
	AutomountServiceAccountToken  *bool `yaml:"automountServiceAccountToken"`
	EnableServiceLinks            *bool `yaml:"enableServiceLinks"`
	TerminationGracePeriodSeconds *int  `yaml:"terminationGracePeriodSeconds"`
	SecurityContext               struct {
		RunAsNonRoot        *bool          `yaml:"runAsNonRoot"`
		RunAsUser           *int64         `yaml:"runAsUser"`
		RunAsGroup          *int64         `yaml:"runAsGroup"`
		FSGroup             *int64         `yaml:"fsGroup"`
		FSGroupChangePolicy string         `yaml:"fsGroupChangePolicy"`
		SeccompProfile      seccompProfile `yaml:"seccompProfile"`
	} `yaml:"securityContext"`
	TopologySpreadConstraints []struct {
		MaxSkew           int    `yaml:"maxSkew"`
		TopologyKey       string `yaml:"topologyKey"`
		WhenUnsatisfiable string `yaml:"whenUnsatisfiable"`
		LabelSelector     struct {
			MatchLabels map[string]string `yaml:"matchLabels"`
		} `yaml:"labelSelector"`
	} `yaml:"topologySpreadConstraints"`
	Containers []container `yaml:"containers"`
	Volumes    []volume    `yaml:"volumes"`
}

type statefulSet struct {
	APIVersion string     `yaml:"apiVersion"`
	Kind       string     `yaml:"kind"`
	Metadata   objectMeta `yaml:"metadata"`
	Spec       struct {
		ServiceName         string `yaml:"serviceName"`
		Replicas            *int   `yaml:"replicas"`
		PodManagementPolicy string `yaml:"podManagementPolicy"`
		UpdateStrategy      struct {
			Type string `yaml:"type"`
		} `yaml:"updateStrategy"`
		Selector struct {
			MatchLabels map[string]string `yaml:"matchLabels"`
		} `yaml:"selector"`
		Template struct {
			Metadata objectMeta `yaml:"metadata"`
			Spec     podSpec    `yaml:"spec"`
		} `yaml:"template"`
		VolumeClaimTemplates []struct {
			Metadata objectMeta `yaml:"metadata"`
			Spec     struct {
				AccessModes      []string  `yaml:"accessModes"`
				StorageClassName *string   `yaml:"storageClassName"`
				Resources        resources `yaml:"resources"`
			} `yaml:"spec"`
		} `yaml:"volumeClaimTemplates"`
	} `yaml:"spec"`
}

type service struct {
	APIVersion string     `yaml:"apiVersion"`
	Kind       string     `yaml:"kind"`
	Metadata   objectMeta `yaml:"metadata"`
	Spec       struct {
		Type                     string            `yaml:"type"`
		ClusterIP                string            `yaml:"clusterIP"`
		PublishNotReadyAddresses bool              `yaml:"publishNotReadyAddresses"`
		Selector                 map[string]string `yaml:"selector"`
		Ports                    []struct {
			Name       string      `yaml:"name"`
			Port       int         `yaml:"port"`
			TargetPort intOrString `yaml:"targetPort"`
			Protocol   string      `yaml:"protocol"`
		} `yaml:"ports"`
	} `yaml:"spec"`
}

type configMap struct {
	APIVersion string            `yaml:"apiVersion"`
	Kind       string            `yaml:"kind"`
	Metadata   objectMeta        `yaml:"metadata"`
	Data       map[string]string `yaml:"data"`
}

type secret struct {
	APIVersion string            `yaml:"apiVersion"`
	Kind       string            `yaml:"kind"`
	Metadata   objectMeta        `yaml:"metadata"`
	Type       string            `yaml:"type"`
	StringData map[string]string `yaml:"stringData"`
	Data       map[string]string `yaml:"data"`
}

type kustomization struct {
	APIVersion string   `yaml:"apiVersion"`
	Kind       string   `yaml:"kind"`
	Namespace  string   `yaml:"namespace"`
	Resources  []string `yaml:"resources"`
	Images     []struct {
		Name    string `yaml:"name"`
		NewName string `yaml:"newName"`
		NewTag  string `yaml:"newTag"`
		Digest  string `yaml:"digest"`
	} `yaml:"images"`
}

// kube is the parsed manifests.
type kube struct {
	kust      kustomization
	sts       statefulSet
	svc       service
	cm        configMap
	sec       secret
	files     map[string]string // kind -> file
	container *container
}

// decodeStrict decodes one YAML document into v, failing on unknown fields.
func decodeStrict(t *testing.T, file string, doc []byte, v any) {
	t.Helper()
	dec := yaml.NewDecoder(bytes.NewReader(doc))
	dec.KnownFields(true)
	require.NoError(t, dec.Decode(v), "%s: a field the test's subset of the Kubernetes API does not know (a typo, or add it to kubernetes_test.go)", file)
}

// loadKube parses kustomization.yaml and every resource it lists. Each
// document must have apiVersion, kind and metadata.name, and no namespace.
func loadKube(t *testing.T) *kube {
	t.Helper()
	k := &kube{files: map[string]string{}}
	kb, err := os.ReadFile(filepath.Join(kubeDir, "kustomization.yaml"))
	require.NoError(t, err)
	decodeStrict(t, "kustomization.yaml", kb, &k.kust)
	require.Equal(t, "Kustomization", k.kust.Kind)
	require.Empty(t, k.kust.Namespace, "kustomization.yaml: the manifests are namespace-agnostic; choose it at apply time")

	// Every manifest in the folder is listed, and every listed one exists.
	onDisk, err := filepath.Glob(filepath.Join(kubeDir, "*.yaml"))
	require.NoError(t, err)
	var want []string
	for _, f := range onDisk {
		if b := filepath.Base(f); b != "kustomization.yaml" {
			want = append(want, b)
		}
	}
	got := slices.Clone(k.kust.Resources)
	sort.Strings(got)
	sort.Strings(want)
	require.Equal(t, want, got, "kustomization.yaml resources must list exactly the manifests in %s/", kubeDir)

	// The kinds this test checks: each one's API version and where its
	// manifest is decoded.
	kinds := map[string]struct {
		apiVersion string
		into       any
	}{
		"StatefulSet": {"apps/v1", &k.sts},
		"Service":     {"v1", &k.svc},
		"ConfigMap":   {"v1", &k.cm},
		"Secret":      {"v1", &k.sec},
	}
	for _, f := range k.kust.Resources {
		b, err := os.ReadFile(filepath.Join(kubeDir, f))
		require.NoError(t, err)
		docs := splitDocs(t, f, b)
		require.NotEmpty(t, docs, "%s holds no document", f)
		for _, doc := range docs {
			var head struct {
				APIVersion string         `yaml:"apiVersion"`
				Kind       string         `yaml:"kind"`
				Metadata   map[string]any `yaml:"metadata"`
			}
			require.NoError(t, yaml.Unmarshal(doc, &head), f)
			require.NotEmpty(t, head.APIVersion, "%s: apiVersion", f)
			require.NotEmpty(t, head.Kind, "%s: kind", f)
			name, _ := head.Metadata["name"].(string)
			require.NotEmpty(t, name, "%s: metadata.name", f)
			require.NotContains(t, head.Metadata, "namespace", "%s: namespace-agnostic manifests name no namespace", f)
			require.NotContains(t, k.files, head.Kind, "%s: a second %s", f, head.Kind)
			k.files[head.Kind] = f
			kind, ok := kinds[head.Kind]
			if !ok {
				t.Fatalf("%s: kind %s is not checked by this test; add checks for it", f, head.Kind)
			}
			require.Equal(t, kind.apiVersion, head.APIVersion, f)
			decodeStrict(t, f, doc, kind.into)
		}
	}
	for kind := range kinds {
		require.Contains(t, k.files, kind, "no %s among the manifests", kind)
	}
	require.Len(t, k.sts.Spec.Template.Spec.Containers, 1, "the StatefulSet runs one container")
	k.container = &k.sts.Spec.Template.Spec.Containers[0]
	return k
}

// splitDocs splits a YAML stream into its documents.
func splitDocs(t *testing.T, file string, b []byte) [][]byte {
	t.Helper()
	dec := yaml.NewDecoder(bytes.NewReader(b))
	var out [][]byte
	for {
		var n yaml.Node
		err := dec.Decode(&n)
		if errors.Is(err, io.EOF) {
			return out
		}
		require.NoError(t, err, "%s: not YAML", file)
		doc, err := yaml.Marshal(&n)
		require.NoError(t, err)
		out = append(out, doc)
	}
}

// args checks the container's args as a dewline command line and returns
// the run flags' values.
func (k *kube) args(t *testing.T) map[string]string {
	t.Helper()
	return checkRunCommandLine(t, k.files["StatefulSet"]+" args", k.container.Args)
}

// config parses the configuration held by the ConfigMap at the key the
// container mounts as --config.
func (k *kube) config(t *testing.T) *config.Config {
	t.Helper()
	key := k.configKey(t)
	text, ok := k.cm.Data[key]
	require.True(t, ok, "the ConfigMap has no key %q", key)
	cfg, err := config.Parse(strings.NewReader(text), k.files["ConfigMap"]+" data."+key)
	require.NoError(t, err)
	return cfg
}

// configKey finds the ConfigMap key mounted at the path given to --config.
func (k *kube) configKey(t *testing.T) string {
	t.Helper()
	cfgPath := argValue(t, k.container.Args, "config")
	require.NotEmpty(t, cfgPath, "the container's args give no --config")
	for _, m := range k.container.VolumeMounts {
		v := k.volume(m.Name)
		if v == nil || v.ConfigMap == nil {
			continue
		}
		require.Equal(t, k.cm.Metadata.Name, v.ConfigMap.Name, "volume %s mounts a ConfigMap that is not among the manifests", v.Name)
		switch {
		case m.SubPath != "" && m.MountPath == cfgPath:
			return m.SubPath
		case m.SubPath == "" && path.Dir(cfgPath) == path.Clean(m.MountPath):
			return path.Base(cfgPath)
		}
	}
	t.Fatalf("--config %s is not a file of the ConfigMap %s as mounted", cfgPath, k.cm.Metadata.Name)
	return ""
}

// argValue returns the value of --name (or -name) in args, "" when absent;
// it reads both "--name value" and "--name=value".
func argValue(t *testing.T, args []string, name string) string {
	t.Helper()
	for i, a := range args {
		a = strings.TrimPrefix(strings.TrimPrefix(a, "-"), "-")
		if a == name && i+1 < len(args) {
			return args[i+1]
		}
		if v, ok := strings.CutPrefix(a, name+"="); ok {
			return v
		}
	}
	return ""
}

func (k *kube) volume(name string) *volume {
	for i := range k.sts.Spec.Template.Spec.Volumes {
		if k.sts.Spec.Template.Spec.Volumes[i].Name == name {
			return &k.sts.Spec.Template.Spec.Volumes[i]
		}
	}
	return nil
}

func (k *kube) hasClaimTemplate(name string) bool {
	for _, c := range k.sts.Spec.VolumeClaimTemplates {
		if c.Metadata.Name == name {
			return true
		}
	}
	return false
}

// port resolves a probe's or service's port (a number or a container port
// name) to its number.
func (k *kube) port(t *testing.T, p intOrString) int {
	t.Helper()
	if n, err := strconv.Atoi(string(p)); err == nil {
		return n
	}
	for _, cp := range k.container.Ports {
		if cp.Name == string(p) {
			return cp.ContainerPort
		}
	}
	t.Fatalf("port %q is neither a number nor a named container port", p)
	return 0
}

// TestDeploy_KubernetesConfig: the configuration in the ConfigMap loads,
// its secrets come from the Secret through the pod's env, and its HTTP
// address is one the agent accepts with that token.
func TestDeploy_KubernetesConfig(t *testing.T) {
	k := loadKube(t)
	cfg := k.config(t)
	assert.Equal(t, "influxdb", cfg.Store.Kind, "replicas share one store only with InfluxDB; the embedded store is one local file")
	assert.GreaterOrEqual(t, len(cfg.AirHandlers), 2, "a portfolio of several air handlers")

	// Secret references: each names the Secret in the manifests and one of
	// its keys; each key is used; no value is committed.
	fromSecret := map[string]bool{}
	used := map[string]bool{}
	for _, e := range k.container.Env {
		if e.ValueFrom == nil || e.ValueFrom.SecretKeyRef == nil {
			assert.NotRegexp(t, `(?i)token|secret|password`, e.Name, "env %s looks like a secret but is not read from the Secret", e.Name)
			continue
		}
		ref := e.ValueFrom.SecretKeyRef
		assert.Equal(t, k.sec.Metadata.Name, ref.Name, "env %s reads a Secret that is not among the manifests", e.Name)
		assert.Contains(t, k.sec.StringData, ref.Key, "env %s reads key %q, missing from the Secret", e.Name, ref.Key)
		fromSecret[e.Name] = true
		used[ref.Key] = true
	}
	for key, val := range k.sec.StringData {
		assert.True(t, used[key], "the Secret's key %q is read by no env", key)
		assert.Empty(t, val, "the Secret's %q must stay an empty placeholder: secrets are never committed", key)
	}
	assert.Empty(t, k.sec.Data, "the Secret carries placeholders in stringData only")

	// Every secret the configuration names reaches the pod from the Secret.
	names := secretEnvs(cfg)
	require.NotEmpty(t, names)
	for name, key := range names {
		assert.True(t, fromSecret[name], "%s names %s, which the container does not get from the Secret", key, name)
	}
	checkSecretsFromEnv(t, cfg)

	// Probes reach the pod's IP: the agent must listen on every interface,
	// which it allows only with the bearer token.
	host, _, err := net.SplitHostPort(cfg.HTTP.Listen)
	require.NoError(t, err)
	assert.Contains(t, []string{"", "0.0.0.0", "::"}, host, "http.listen %s: the kubelet probes the pod's IP", cfg.HTTP.Listen)
	tel := telemetry.New()
	_, err = server.New(server.Options{Listen: cfg.HTTP.Listen, Telemetry: tel, Log: zerolog.Nop()})
	require.ErrorIs(t, err, server.ErrInsecureListen, "without the token the agent refuses this address")
	require.NotEmpty(t, cfg.HTTP.TokenEnv, "http.token_env")
	token, err := config.SecretFromEnv("http.token_env", cfg.HTTP.TokenEnv)
	require.NoError(t, err)
	_, err = server.New(server.Options{Listen: cfg.HTTP.Listen, BearerToken: token, Telemetry: tel, Log: zerolog.Nop()})
	require.NoError(t, err, "with the token from the Secret the agent takes http.listen %s", cfg.HTTP.Listen)
}

// shardCheckConfig is the smallest agent configuration: one air handler,
// the embedded store, one hour of backfill (invented values).
const shardCheckConfig = `version: 1
site: {name: shard-check, timezone: UTC, altitude: 0m}
schedule: {backfill: 1h}
air_handlers:
  - id: AHU-1
    cooling: {kind: dx, rated_eer: 10}
    reheat: {kind: none}
    airflow: {basis: standard}
    fan: {position: none}
    target: {max_supply_dewpoint: 12C}
    points:
      entering_temp: {point: mat, unit: C}
      entering_rh: {point: mrh, unit: "%"}
      leaving_temp: {point: lat, unit: C}
      supply_temp: {point: sat, unit: C}
      supply_flow: {point: flow, unit: m3/s}
`

// shardArg is the form the StatefulSet passes: the pod's name and the
// replica count.
var shardArg = regexp.MustCompile(`^\$\(POD_NAME\)/([0-9]+)$`)

// TestDeploy_KubernetesArgs: the container's args are a dewline run
// command line; --shard is $(POD_NAME)/replicas, POD_NAME is the pod's
// name, every replica owns air handlers and together they own all; the
// pod's grace period covers the agent's.
func TestDeploy_KubernetesArgs(t *testing.T) {
	k := loadKube(t)
	if len(k.container.Command) > 0 {
		assert.Equal(t, []string{dockerEntrypoint(t)}, k.container.Command, "command, when given, is the image's entry point")
	}
	vals := k.args(t)

	// --shard $(POD_NAME)/N with N = spec.replicas.
	require.NotNil(t, k.sts.Spec.Replicas, "spec.replicas")
	replicas := *k.sts.Spec.Replicas
	require.GreaterOrEqual(t, replicas, 1)
	m := shardArg.FindStringSubmatch(vals["shard"])
	require.NotNil(t, m, "--shard %q: give $(POD_NAME)/%d", vals["shard"], replicas)
	n, _ := strconv.Atoi(m[1])
	assert.Equal(t, replicas, n, "--shard's n must equal spec.replicas, or air handlers go unowned or twice owned")
	var podName *envVar
	for i, e := range k.container.Env {
		if e.Name == "POD_NAME" {
			podName = &k.container.Env[i]
		}
	}
	require.NotNil(t, podName, "$(POD_NAME) is expanded only from a defined env variable")
	require.NotNil(t, podName.ValueFrom, "POD_NAME comes from the downward API")
	require.NotNil(t, podName.ValueFrom.FieldRef, "POD_NAME comes from the downward API")
	assert.Equal(t, "metadata.name", podName.ValueFrom.FieldRef.FieldPath)

	// Kubernetes names a StatefulSet's pods NAME-0 ... NAME-(replicas-1)
	// (StatefulSet documentation, "Pod Identity"); the binary takes each
	// expanded argument as a shard.
	cfg := k.config(t)
	cfgCopy := filepath.Join(t.TempDir(), "dewline.yaml")
	require.NoError(t, os.WriteFile(cfgCopy, []byte(shardCheckConfig), 0o600))
	owner := map[string]int{}
	for i := 0; i < replicas; i++ {
		pod := fmt.Sprintf("%s-%d", k.sts.Metadata.Name, i)
		arg := strings.Replace(vals["shard"], "$(POD_NAME)", pod, 1)
		// A one-hour embedded configuration stands in for the store: a
		// usage error (exit 2) would mean the argument itself is refused.
		code, _, errOut := runDewline(t, "--log-level", "error", "run", "--config", cfgCopy, "--shard", arg, "--dry-run", "--as-of", "2026-07-01T08:07")
		assert.NotEqual(t, 2, code, "dewline refuses --shard %s: %s", arg, errOut)
		assert.NotContains(t, errOut, "--shard")

		owned := agent.Shard{Index: i, Count: replicas}.Owned(cfg)
		assert.NotEmpty(t, owned, "pod %s owns no air handler of the ConfigMap's configuration: it would run nothing", pod)
		for _, id := range owned {
			_, twice := owner[id]
			assert.False(t, twice, "%s owned by two replicas", id)
			owner[id] = i
		}
	}
	assert.Len(t, owner, len(cfg.AirHandlers), "the replicas together own every air handler")

	// The pod's grace period covers --grace and the HTTP endpoint's 5 s
	// shutdown that follows it (cmd/dewline/run.go).
	grace, err := time.ParseDuration(vals["grace"])
	require.NoError(t, err, "--grace %q", vals["grace"])
	tgps := k.sts.Spec.Template.Spec.TerminationGracePeriodSeconds
	require.NotNil(t, tgps, "terminationGracePeriodSeconds (the default 30 s is not above --grace)")
	assert.Greater(t, time.Duration(*tgps)*time.Second, grace+5*time.Second,
		"terminationGracePeriodSeconds %d must exceed --grace %v plus 5 s, or the run in flight is killed", *tgps, grace)
}

// TestDeploy_KubernetesProbes: liveness on /healthz and readiness on
// /readyz (or, while /readyz needs the token, a TCP check), on the port the
// configuration listens on, and the real HTTP endpoint answers them so.
func TestDeploy_KubernetesProbes(t *testing.T) {
	k := loadKube(t)
	cfg := k.config(t)
	_, portS, err := net.SplitHostPort(cfg.HTTP.Listen)
	require.NoError(t, err)
	listenPort, err := strconv.Atoi(portS)
	require.NoError(t, err)

	c := k.container
	require.Len(t, c.Ports, 1)
	assert.Equal(t, listenPort, c.Ports[0].ContainerPort, "containerPort is http.listen's port")

	live := c.LivenessProbe
	require.NotNil(t, live, "livenessProbe")
	require.NotNil(t, live.HTTPGet, "livenessProbe is an httpGet")
	assert.Equal(t, "/healthz", live.HTTPGet.Path)
	assert.Equal(t, listenPort, k.port(t, live.HTTPGet.Port), "liveness probe port")
	assert.Empty(t, live.HTTPGet.HTTPHeaders, "no header: a token in a manifest is a committed secret")

	if sp := c.StartupProbe; sp != nil {
		require.NotNil(t, sp.HTTPGet, "startupProbe is an httpGet")
		assert.Equal(t, "/healthz", sp.HTTPGet.Path, "startupProbe: the process serves")
		assert.Equal(t, listenPort, k.port(t, sp.HTTPGet.Port), "startup probe port")
	}

	ready := c.ReadinessProbe
	require.NotNil(t, ready, "readinessProbe")
	token := "probe-check-token"
	base := startServer(t, token)
	assert.Equal(t, http.StatusOK, get(t, base+"/healthz"), "/healthz answers without the token, as the liveness probe calls it")
	readyzOpen := get(t, base+"/readyz") != http.StatusUnauthorized
	switch {
	case ready.HTTPGet != nil:
		assert.Equal(t, "/readyz", ready.HTTPGet.Path)
		assert.Equal(t, listenPort, k.port(t, ready.HTTPGet.Port), "readiness probe port")
		assert.Empty(t, ready.HTTPGet.HTTPHeaders, "no header: a token in a manifest is a committed secret")
		assert.True(t, readyzOpen, "/readyz needs the bearer token, which an httpGet probe cannot send")
	case ready.TCPSocket != nil:
		assert.Equal(t, listenPort, k.port(t, ready.TCPSocket.Port), "readiness probe port")
		assert.False(t, readyzOpen, "/readyz now answers without the token: make the readiness probe an httpGet on /readyz")
	default:
		t.Fatal("readinessProbe: httpGet on /readyz (or tcpSocket while /readyz needs the token); the image has no shell for exec")
	}

	// The headless Service selects the pods and reaches the same port.
	assert.Equal(t, "None", k.svc.Spec.ClusterIP, "a StatefulSet's governing Service is headless")
	assert.Equal(t, k.svc.Metadata.Name, k.sts.Spec.ServiceName, "spec.serviceName names the Service")
	assert.Equal(t, k.sts.Spec.Selector.MatchLabels, k.svc.Spec.Selector, "the Service selects the StatefulSet's pods")
	for key, v := range k.sts.Spec.Selector.MatchLabels {
		assert.Equal(t, v, k.sts.Spec.Template.Metadata.Labels[key], "the pod template carries selector label %s", key)
	}
	require.Len(t, k.svc.Spec.Ports, 1)
	assert.Equal(t, listenPort, k.port(t, k.svc.Spec.Ports[0].TargetPort), "the Service's targetPort")

	// The replicas spread over nodes (one per node where there are
	// enough), counting the StatefulSet's own pods; a soft rule, so that a
	// small cluster still runs every shard.
	spread := k.sts.Spec.Template.Spec.TopologySpreadConstraints
	require.Len(t, spread, 1, "topologySpreadConstraints: the shards on different nodes")
	assert.Equal(t, "kubernetes.io/hostname", spread[0].TopologyKey)
	assert.Equal(t, 1, spread[0].MaxSkew)
	assert.Equal(t, "ScheduleAnyway", spread[0].WhenUnsatisfiable, "never leave a shard unscheduled")
	assert.Equal(t, k.sts.Spec.Selector.MatchLabels, spread[0].LabelSelector.MatchLabels, "it counts the StatefulSet's pods")
}

// TestDeploy_KubernetesSecurity: non-root, read-only root, no capabilities,
// the runtime's seccomp profile, resources, and writable places for the
// state the agent keeps.
func TestDeploy_KubernetesSecurity(t *testing.T) {
	k := loadKube(t)
	pod := k.sts.Spec.Template.Spec
	c := k.container
	sc := c.SecurityContext

	require.NotNil(t, pod.SecurityContext.RunAsNonRoot)
	assert.True(t, *pod.SecurityContext.RunAsNonRoot, "runAsNonRoot")
	require.NotNil(t, pod.SecurityContext.RunAsUser)
	assert.Equal(t, int64(distrolessNonrootUID), *pod.SecurityContext.RunAsUser, "runAsUser is the image's nonroot user")
	require.NotNil(t, sc.ReadOnlyRootFilesystem)
	assert.True(t, *sc.ReadOnlyRootFilesystem, "readOnlyRootFilesystem")
	require.NotNil(t, sc.AllowPrivilegeEscalation)
	assert.False(t, *sc.AllowPrivilegeEscalation, "allowPrivilegeEscalation")
	assert.True(t, sc.Privileged == nil || !*sc.Privileged, "not privileged")
	assert.Equal(t, []string{"ALL"}, sc.Capabilities.Drop, "drop every capability")
	assert.Empty(t, sc.Capabilities.Add, "add none back")
	seccomp := sc.SeccompProfile.Type
	if seccomp == "" {
		seccomp = pod.SecurityContext.SeccompProfile.Type
	}
	assert.Equal(t, "RuntimeDefault", seccomp, "seccompProfile")
	require.NotNil(t, pod.AutomountServiceAccountToken)
	assert.False(t, *pod.AutomountServiceAccountToken, "the agent never calls the Kubernetes API")

	for _, r := range []string{"cpu", "memory"} {
		assert.NotEmpty(t, c.Resources.Requests[r], "resources.requests.%s", r)
		assert.NotEmpty(t, c.Resources.Limits[r], "resources.limits.%s", r)
	}

	// The image is the one the kustomization retags.
	var names []string
	for _, im := range k.kust.Images {
		names = append(names, im.Name)
	}
	assert.Contains(t, names, c.Image, "kustomization.yaml images must retag the container's image")

	// Writable places on a read-only root: the folder of the agent's state
	// file (store.state_path: with InfluxDB its webhook queue is local)
	// and /tmp (SQLite's temporary files).
	statePath := k.config(t).Store.StatePath
	require.True(t, path.IsAbs(statePath), "store.state_path must be an absolute path on the replica's volume, not %q beside the read-only configuration", statePath)
	stateDir := path.Dir(statePath)
	writable := map[string]bool{}
	for _, m := range c.VolumeMounts {
		if m.ReadOnly || m.SubPath != "" {
			continue
		}
		v := k.volume(m.Name)
		if k.hasClaimTemplate(m.Name) || (v != nil && (v.EmptyDir != nil || v.PersistentVolumeClaim != nil)) {
			writable[path.Clean(m.MountPath)] = true
		}
	}
	assert.True(t, writable[stateDir], "the folder of store.state_path (%s) must be a writable volume", stateDir)
	assert.True(t, writable["/tmp"], "/tmp must be a writable volume on a read-only root filesystem")
	for _, m := range c.VolumeMounts {
		if v := k.volume(m.Name); v != nil && v.ConfigMap != nil {
			assert.True(t, m.ReadOnly, "the configuration is mounted read-only")
		}
	}
}

// startServer starts the agent's real HTTP endpoint on a free loopback
// port with the given bearer token and returns its base URL.
func startServer(t *testing.T, token string) string {
	t.Helper()
	srv, err := server.New(server.Options{Listen: "127.0.0.1:0", BearerToken: token,
		Telemetry: telemetry.New(), Log: zerolog.Nop()})
	require.NoError(t, err)
	require.NoError(t, srv.Start())
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = srv.Shutdown(ctx)
	})
	return "http://" + srv.Addr()
}

// get returns the status of a GET without credentials, as a probe sends it.
func get(t *testing.T, url string) int {
	t.Helper()
	c := &http.Client{Timeout: 10 * time.Second}
	resp, err := c.Get(url)
	require.NoError(t, err)
	_, _ = io.Copy(io.Discard, resp.Body)
	_ = resp.Body.Close()
	return resp.StatusCode
}
