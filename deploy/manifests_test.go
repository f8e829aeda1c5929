package deploy_test

import (
	halovetservice "github.com/halovet/halovet/service"

	"fmt"
	"maps"
	"net"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"sigs.k8s.io/yaml"
)

// The few Kubernetes fields these tests look at, in the shape of the API objects.
type (
	meta struct {
		Name        string            `json:"name"`
		Namespace   string            `json:"namespace"`
		Labels      map[string]string `json:"labels"`
		Annotations map[string]string `json:"annotations"`
	}
	object struct {
		APIVersion string `json:"apiVersion"`
		Kind       string `json:"kind"`
		Metadata   meta   `json:"metadata"`
	}
	selector struct {
		MatchLabels map[string]string `json:"matchLabels"`
	}
	probe struct {
		GRPC *struct {
			Port    int     `json:"port"`
			Service *string `json:"service"`
		} `json:"grpc"`
		PeriodSeconds    int `json:"periodSeconds"`
		FailureThreshold int `json:"failureThreshold"`
	}
	envVar struct {
		Name      string `json:"name"`
		Value     string `json:"value"`
		ValueFrom *struct {
			SecretKeyRef *struct {
				Name string `json:"name"`
				Key  string `json:"key"`
			} `json:"secretKeyRef"`
		} `json:"valueFrom"`
	}
	securityContext struct {
		RunAsNonRoot             *bool  `json:"runAsNonRoot"`
		RunAsUser                *int64 `json:"runAsUser"`
		ReadOnlyRootFilesystem   *bool  `json:"readOnlyRootFilesystem"`
		AllowPrivilegeEscalation *bool  `json:"allowPrivilegeEscalation"`
	}
	container struct {
		Name    string   `json:"name"`
		Image   string   `json:"image"`
		Command []string `json:"command"`
		Args    []string `json:"args"`
		Ports   []struct {
			Name          string `json:"name"`
			ContainerPort int    `json:"containerPort"`
		} `json:"ports"`
		Env     []envVar `json:"env"`
		EnvFrom []struct {
			ConfigMapRef *struct {
				Name string `json:"name"`
			} `json:"configMapRef"`
		} `json:"envFrom"`
		ReadinessProbe *probe `json:"readinessProbe"`
		LivenessProbe  *probe `json:"livenessProbe"`
		StartupProbe   *probe `json:"startupProbe"`
		Lifecycle      *struct {
			PreStop *struct {
				Sleep *struct {
					Seconds int `json:"seconds"`
				} `json:"sleep"`
			} `json:"preStop"`
		} `json:"lifecycle"`
		Resources struct {
			Requests map[string]string `json:"requests"`
			Limits   map[string]string `json:"limits"`
		} `json:"resources"`
		SecurityContext securityContext `json:"securityContext"`
	}
	podTemplate struct {
		Metadata meta `json:"metadata"`
		Spec     struct {
			RestartPolicy                 string          `json:"restartPolicy"`
			TerminationGracePeriodSeconds *int            `json:"terminationGracePeriodSeconds"`
			SecurityContext               securityContext `json:"securityContext"`
			Containers                    []container     `json:"containers"`
		} `json:"spec"`
	}
	deployment struct {
		object
		Spec struct {
			Replicas *int        `json:"replicas"`
			Selector selector    `json:"selector"`
			Template podTemplate `json:"template"`
		} `json:"spec"`
	}
	job struct {
		object
		Spec struct {
			Template podTemplate `json:"template"`
		} `json:"spec"`
	}
	service struct {
		object
		Spec struct {
			Type     string            `json:"type"`
			Selector map[string]string `json:"selector"`
			Ports    []struct {
				Name        string `json:"name"`
				Port        int    `json:"port"`
				TargetPort  any    `json:"targetPort"`
				AppProtocol string `json:"appProtocol"`
			} `json:"ports"`
		} `json:"spec"`
	}
	pdb struct {
		object
		Spec struct {
			MinAvailable   any      `json:"minAvailable"`
			MaxUnavailable any      `json:"maxUnavailable"`
			Selector       selector `json:"selector"`
		} `json:"spec"`
	}
	configMap struct {
		object
		Data map[string]string `json:"data"`
	}
	secret struct {
		object
		StringData map[string]string `json:"stringData"`
	}
	kustomization struct {
		object
		Namespace string   `json:"namespace"`
		Resources []string `json:"resources"`
		Images    []struct {
			Name string `json:"name"`
		} `json:"images"`
	}
)

// apiPort is the port halovet serves gRPC on in every deployment form.
const apiPort = 7390

// httpPort is the HTTP/JSON and gRPC-Web port (serve --http-listen).
const httpPort = 7391

// metricsPort is the Prometheus metrics port (serve --metrics-listen).
const metricsPort = 7392

// load parses one YAML file into v, failing the test on any error.
func load(t *testing.T, path string, v any) {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if docs := regexp.MustCompile(`(?m)^---\s*$`).Split(string(data), -1); len(docs) > 1 {
		t.Fatalf("%s holds %d YAML documents; keep one object per file", path, len(docs))
	}
	if err := yaml.Unmarshal(data, v); err != nil {
		t.Fatalf("parse %s: %v", path, err)
	}
}

// manifests holds every parsed Kubernetes manifest.
type manifests struct {
	deployment deployment
	job        job
	service    service
	pdb        pdb
	configMap  configMap
	secret     secret
	kust       kustomization
}

func loadManifests(t *testing.T) manifests {
	t.Helper()
	var m manifests
	load(t, "k8s/deployment.yaml", &m.deployment)
	load(t, "k8s/migrate-job.yaml", &m.job)
	load(t, "k8s/service.yaml", &m.service)
	load(t, "k8s/pdb.yaml", &m.pdb)
	load(t, "k8s/configmap.yaml", &m.configMap)
	load(t, "k8s/secret.example.yaml", &m.secret)
	load(t, "k8s/kustomization.yaml", &m.kust)
	return m
}

// onlyContainer returns the single container of a pod template.
func onlyContainer(t *testing.T, what string, p podTemplate) container {
	t.Helper()
	if len(p.Spec.Containers) != 1 {
		t.Fatalf("%s has %d containers; want 1", what, len(p.Spec.Containers))
	}
	return p.Spec.Containers[0]
}

// selects reports whether every selector label is set to the same value in labels.
func selects(sel, labels map[string]string) bool {
	if len(sel) == 0 {
		return false
	}
	for k, v := range sel {
		if labels[k] != v {
			return false
		}
	}
	return true
}

// show prints the value behind an optional field.
func show[T any](p *T) string {
	if p == nil {
		return "unset"
	}
	return fmt.Sprint(*p)
}

// showEnv prints where an env entry takes its value from.
func showEnv(e envVar) string {
	if e.ValueFrom != nil && e.ValueFrom.SecretKeyRef != nil {
		return fmt.Sprintf("secret %s key %s", e.ValueFrom.SecretKeyRef.Name, e.ValueFrom.SecretKeyRef.Key)
	}
	return fmt.Sprintf("value %q", e.Value)
}

// envValue returns the env entry called name.
func envValue(c container, name string) (envVar, bool) {
	for _, e := range c.Env {
		if e.Name == name {
			return e, true
		}
	}
	return envVar{}, false
}

func TestEveryManifestParsesAndIsNamespaceAgnostic(t *testing.T) {
	files, err := filepath.Glob("k8s/*.yaml")
	if err != nil {
		t.Fatal(err)
	}
	if len(files) < 7 {
		t.Fatalf("found %d manifests in k8s/; want at least 7: %v", len(files), files)
	}
	for _, f := range files {
		var o object
		load(t, f, &o)
		if o.APIVersion == "" || o.Kind == "" {
			t.Errorf("%s: apiVersion %q kind %q; want both", f, o.APIVersion, o.Kind)
		}
		if o.Kind != "Kustomization" && o.Metadata.Name == "" {
			t.Errorf("%s: %s has no metadata.name", f, o.Kind)
		}
		if o.Metadata.Namespace != "" {
			t.Errorf("%s sets namespace %q; the manifests must apply to any namespace", f, o.Metadata.Namespace)
		}
	}
}

func TestKustomizationListsEveryManifestButTheExampleSecret(t *testing.T) {
	m := loadManifests(t)
	files, err := filepath.Glob("k8s/*.yaml")
	if err != nil {
		t.Fatal(err)
	}
	var want []string
	for _, f := range files {
		base := filepath.Base(f)
		if base != "kustomization.yaml" && !strings.HasSuffix(base, ".example.yaml") {
			want = append(want, base)
		}
	}
	got := slices.Clone(m.kust.Resources)
	slices.Sort(got)
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("kustomization resources = %v; want exactly %v (an example must never be applied)", got, want)
	}
	if m.kust.Namespace != "" {
		t.Errorf("kustomization sets namespace %q; leave it to overlays", m.kust.Namespace)
	}
	image, _, _ := strings.Cut(onlyContainer(t, "deployment", m.deployment.Spec.Template).Image, ":")
	if len(m.kust.Images) != 1 || m.kust.Images[0].Name != image {
		t.Errorf("kustomization images = %+v; want one entry named %q, the server's image", m.kust.Images, image)
	}
}

func TestDeploymentServesGRPCWithProbesAndSecrets(t *testing.T) {
	m := loadManifests(t)
	d := m.deployment
	if d.Kind != "Deployment" || d.Spec.Replicas == nil || *d.Spec.Replicas != 3 {
		t.Errorf("deployment kind %q replicas %s; want a Deployment with 3 replicas", d.Kind, show(d.Spec.Replicas))
	}
	if !selects(d.Spec.Selector.MatchLabels, d.Spec.Template.Metadata.Labels) {
		t.Errorf("deployment selector %v does not match its pod labels %v", d.Spec.Selector.MatchLabels, d.Spec.Template.Metadata.Labels)
	}
	c := onlyContainer(t, "deployment", d.Spec.Template)
	if len(c.Command) != 0 || !slices.Equal(c.Args, []string{"serve"}) {
		t.Errorf("container command %v args %v; want the image entrypoint with args [serve]", c.Command, c.Args)
	}
	if len(c.Ports) != 3 || c.Ports[0].ContainerPort != apiPort || c.Ports[0].Name != "grpc" ||
		c.Ports[1].ContainerPort != httpPort || c.Ports[1].Name != "http" ||
		c.Ports[2].ContainerPort != metricsPort || c.Ports[2].Name != "metrics" {
		t.Errorf("container ports %+v; want %d named grpc, %d named http and %d named metrics", c.Ports, apiPort, httpPort, metricsPort)
	}
	if a := d.Spec.Template.Metadata.Annotations; a["prometheus.io/scrape"] != "true" || a["prometheus.io/port"] != strconv.Itoa(metricsPort) {
		t.Errorf("pod annotations %v; want prometheus.io/scrape true on port %d", a, metricsPort)
	}
	for name, p := range map[string]*probe{"readinessProbe": c.ReadinessProbe, "livenessProbe": c.LivenessProbe} {
		if p == nil || p.GRPC == nil || p.GRPC.Port != apiPort {
			t.Errorf("%s = %+v; want a native grpc probe on port %d", name, p, apiPort)
		}
	}
	// The startup probe holds the other two back while the server loads; it asks the
	// liveness service (loading is not a database outage) and gives a minute at least.
	if p := c.StartupProbe; p == nil || p.GRPC == nil || p.GRPC.Port != apiPort || p.GRPC.Service == nil ||
		*p.GRPC.Service != halovetservice.LivenessService || p.PeriodSeconds*p.FailureThreshold < 60 {
		t.Errorf("startupProbe = %+v; want a grpc probe of %q on port %d allowing at least 60s", p, halovetservice.LivenessService, apiPort)
	}
	if p := c.LivenessProbe; p != nil && p.PeriodSeconds*max(p.FailureThreshold, 1) < 60 {
		t.Errorf("livenessProbe gives up after %ds; want at least 60s", p.PeriodSeconds*p.FailureThreshold)
	}
	// Readiness follows the database (the overall status); liveness asks for the service
	// name that stays SERVING while the process runs, so an outage restarts nothing.
	if p := c.LivenessProbe; p != nil && p.GRPC != nil && (p.GRPC.Service == nil || *p.GRPC.Service != halovetservice.LivenessService) {
		t.Errorf("livenessProbe asks for health service %s; want %q", show(p.GRPC.Service), halovetservice.LivenessService)
	}
	if p := c.ReadinessProbe; p != nil && p.GRPC != nil && p.GRPC.Service != nil && *p.GRPC.Service != "" {
		t.Errorf("readinessProbe asks for health service %q; want the overall status", *p.GRPC.Service)
	}

	db, ok := envValue(c, "HALOVET_DATABASE_URL")
	if !ok || db.Value != "" || db.ValueFrom == nil || db.ValueFrom.SecretKeyRef == nil {
		t.Fatalf("HALOVET_DATABASE_URL = %s; want it from a secretKeyRef, never inline", showEnv(db))
	}
	ref := db.ValueFrom.SecretKeyRef
	if ref.Name != m.secret.Metadata.Name {
		t.Errorf("database URL comes from secret %q; secret.example.yaml defines %q", ref.Name, m.secret.Metadata.Name)
	}
	if _, ok := m.secret.StringData[ref.Key]; !ok {
		t.Errorf("database URL key %q is missing from secret.example.yaml (keys %v)", ref.Key, m.secret.StringData)
	}
	if len(c.EnvFrom) != 1 || c.EnvFrom[0].ConfigMapRef == nil || c.EnvFrom[0].ConfigMapRef.Name != m.configMap.Metadata.Name {
		t.Errorf("envFrom %+v; want the ConfigMap %q", c.EnvFrom, m.configMap.Metadata.Name)
	}

	pod := d.Spec.Template.Spec.SecurityContext
	if pod.RunAsNonRoot == nil || !*pod.RunAsNonRoot || pod.RunAsUser == nil || *pod.RunAsUser == 0 {
		t.Errorf("pod securityContext %+v; want runAsNonRoot and a non-zero runAsUser", pod)
	}
	sc := c.SecurityContext
	if sc.ReadOnlyRootFilesystem == nil || !*sc.ReadOnlyRootFilesystem || sc.AllowPrivilegeEscalation == nil || *sc.AllowPrivilegeEscalation {
		t.Errorf("container securityContext %+v; want readOnlyRootFilesystem and no privilege escalation", sc)
	}
	if c.Resources.Requests["cpu"] == "" || c.Resources.Requests["memory"] == "" || c.Resources.Limits["memory"] == "" {
		t.Errorf("resources %+v; want cpu and memory requests and a memory limit", c.Resources)
	}

	grace, err := time.ParseDuration(m.configMap.Data["HALOVET_GRACE_PERIOD"])
	if err != nil {
		t.Fatalf("ConfigMap HALOVET_GRACE_PERIOD: %v", err)
	}
	preStop := 0
	if c.Lifecycle != nil && c.Lifecycle.PreStop != nil && c.Lifecycle.PreStop.Sleep != nil {
		preStop = c.Lifecycle.PreStop.Sleep.Seconds
	}
	need := grace + time.Duration(preStop)*time.Second
	tg := d.Spec.Template.Spec.TerminationGracePeriodSeconds
	if tg == nil || time.Duration(*tg)*time.Second <= need {
		t.Errorf("terminationGracePeriodSeconds %s; want above the server grace period %v plus preStop %ds", show(tg), grace, preStop)
	}
}

func TestMigrateJobMatchesDeployment(t *testing.T) {
	m := loadManifests(t)
	if m.job.Kind != "Job" {
		t.Fatalf("migrate-job.yaml kind %q; want Job", m.job.Kind)
	}
	jc := onlyContainer(t, "job", m.job.Spec.Template)
	dc := onlyContainer(t, "deployment", m.deployment.Spec.Template)
	if jc.Image != dc.Image {
		t.Errorf("job image %q differs from deployment image %q; migrations must match the server", jc.Image, dc.Image)
	}
	if len(jc.Command) != 0 || !slices.Equal(jc.Args, []string{"migrate"}) {
		t.Errorf("job command %v args %v; want the image entrypoint with args [migrate]", jc.Command, jc.Args)
	}
	if rp := m.job.Spec.Template.Spec.RestartPolicy; rp != "Never" && rp != "OnFailure" {
		t.Errorf("job restartPolicy %q; a Job needs Never or OnFailure", rp)
	}
	jdb, _ := envValue(jc, "HALOVET_DATABASE_URL")
	ddb, _ := envValue(dc, "HALOVET_DATABASE_URL")
	if jdb.ValueFrom == nil || jdb.ValueFrom.SecretKeyRef == nil || ddb.ValueFrom == nil || ddb.ValueFrom.SecretKeyRef == nil ||
		*jdb.ValueFrom.SecretKeyRef != *ddb.ValueFrom.SecretKeyRef {
		t.Errorf("job and deployment take HALOVET_DATABASE_URL from different places: %s vs %s", showEnv(jdb), showEnv(ddb))
	}
	if sc := m.job.Spec.Template.Spec.SecurityContext; sc.RunAsNonRoot == nil || !*sc.RunAsNonRoot {
		t.Errorf("job pod securityContext %+v; want runAsNonRoot", sc)
	}
}

func TestServiceAndBudgetSelectTheServerPods(t *testing.T) {
	m := loadManifests(t)
	pods := m.deployment.Spec.Template.Metadata.Labels
	jobPods := m.job.Spec.Template.Metadata.Labels
	s := m.service
	if s.Spec.Type != "" && s.Spec.Type != "ClusterIP" {
		t.Errorf("service type %q; want ClusterIP", s.Spec.Type)
	}
	if !selects(s.Spec.Selector, pods) || selects(s.Spec.Selector, jobPods) {
		t.Errorf("service selector %v; want it to select the server pods %v and not the migration pods %v", s.Spec.Selector, pods, jobPods)
	}
	if len(s.Spec.Ports) != 2 {
		t.Fatalf("service ports %+v; want grpc and http", s.Spec.Ports)
	}
	if h := s.Spec.Ports[1]; h.Port != httpPort || h.Name != "http" || h.TargetPort != "http" || h.AppProtocol != "http" {
		t.Errorf("service port %+v; want port %d named http, targetPort http, appProtocol http", h, httpPort)
	}
	p := s.Spec.Ports[0]
	target := p.TargetPort == "grpc" || p.TargetPort == float64(apiPort)
	if p.Port != apiPort || !target || p.AppProtocol != "grpc" || p.Name != "grpc" {
		t.Errorf("service port %+v; want port %d named grpc, targetPort grpc, appProtocol grpc", p, apiPort)
	}

	b := m.pdb
	if b.Kind != "PodDisruptionBudget" || !strings.HasPrefix(b.APIVersion, "policy/") {
		t.Errorf("pdb.yaml is %s %s; want a policy/v1 PodDisruptionBudget", b.APIVersion, b.Kind)
	}
	if !selects(b.Spec.Selector.MatchLabels, pods) || selects(b.Spec.Selector.MatchLabels, jobPods) {
		t.Errorf("PDB selector %v; want it to select the server pods %v only", b.Spec.Selector.MatchLabels, pods)
	}
	replicas := *m.deployment.Spec.Replicas
	switch {
	case b.Spec.MinAvailable != nil && b.Spec.MaxUnavailable != nil:
		t.Errorf("PDB sets both minAvailable and maxUnavailable; Kubernetes accepts one")
	case b.Spec.MinAvailable == float64(2) && replicas > 2:
	case b.Spec.MaxUnavailable == float64(1):
	default:
		t.Errorf("PDB minAvailable %v maxUnavailable %v; want minAvailable 2 (below %d replicas) or maxUnavailable 1",
			b.Spec.MinAvailable, b.Spec.MaxUnavailable, replicas)
	}
}

func TestConfigMapAndSecretExample(t *testing.T) {
	m := loadManifests(t)
	d := m.configMap.Data
	host, port, err := net.SplitHostPort(d["HALOVET_LISTEN"])
	if err != nil || host != "0.0.0.0" || port != strconv.Itoa(apiPort) {
		t.Errorf("HALOVET_LISTEN %q; want 0.0.0.0:%d so the pod IP is reachable", d["HALOVET_LISTEN"], apiPort)
	}
	if f := d["HALOVET_LOG_FORMAT"]; f != "json" && f != "text" {
		t.Errorf("HALOVET_LOG_FORMAT %q; accepted are text and json", f)
	}
	if _, ok := d["HALOVET_DATABASE_URL"]; ok {
		t.Errorf("the ConfigMap carries HALOVET_DATABASE_URL; it belongs in the Secret")
	}
	if m.secret.Kind != "Secret" {
		t.Errorf("secret.example.yaml kind %q; want Secret", m.secret.Kind)
	}
	for key, v := range m.secret.StringData {
		if !strings.Contains(v, "CHANGE-ME") {
			t.Errorf("secret.example.yaml %s = %q does not look like a placeholder (no CHANGE-ME)", key, v)
		}
	}
}

// halovetEnv lists the HALOVET_* variables the halovet command reads, from its source.
func halovetEnv(t *testing.T) map[string]bool {
	t.Helper()
	files, err := filepath.Glob("../cmd/halovet/*.go")
	if err != nil || len(files) == 0 {
		t.Fatalf("no halovet command source in ../cmd/halovet: %v", err)
	}
	names := map[string]bool{}
	for _, f := range files {
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		for _, m := range regexp.MustCompile(`"(HALOVET_[A-Z_]+)"`).FindAllSubmatch(data, -1) {
			names[string(m[1])] = true
		}
	}
	return names
}

func TestEnvironmentNamesAreReadByHalovet(t *testing.T) {
	known := halovetEnv(t)
	m := loadManifests(t)
	var used []string
	for k := range m.configMap.Data {
		used = append(used, k)
	}
	for _, c := range []container{onlyContainer(t, "deployment", m.deployment.Spec.Template), onlyContainer(t, "job", m.job.Spec.Template)} {
		for _, e := range c.Env {
			used = append(used, e.Name)
		}
	}
	var compose composeFile
	load(t, "compose.yaml", &compose)
	for _, s := range compose.Services {
		for k := range s.Environment {
			if strings.HasPrefix(k, "HALOVET_") {
				used = append(used, k)
			}
		}
	}
	for _, name := range used {
		if !known[name] {
			t.Errorf("%s is set in deploy/ but cmd/halovet never reads it (it reads %v)", name, slices.Sorted(maps.Keys(known)))
		}
	}
}

// TestNetworkPolicyAdmitsTheServersPorts: the policy selects the server pods (the
// Deployment's labels), admits the API ports and the metrics port by the container's port
// names, and limits both directions.
func TestNetworkPolicyAdmitsTheServersPorts(t *testing.T) {
	m := loadManifests(t)
	var np struct {
		object
		Spec struct {
			PodSelector selector `json:"podSelector"`
			PolicyTypes []string `json:"policyTypes"`
			Ingress     []struct {
				Ports []struct {
					Port any `json:"port"`
				} `json:"ports"`
			} `json:"ingress"`
		} `json:"spec"`
	}
	load(t, "k8s/networkpolicy.yaml", &np)
	if np.Kind != "NetworkPolicy" || !selects(np.Spec.PodSelector.MatchLabels, m.deployment.Spec.Template.Metadata.Labels) {
		t.Errorf("networkpolicy %s selects %v; want the server pods %v", np.Kind, np.Spec.PodSelector.MatchLabels, m.deployment.Spec.Template.Metadata.Labels)
	}
	if !slices.Equal(np.Spec.PolicyTypes, []string{"Ingress", "Egress"}) {
		t.Errorf("policyTypes %v; want Ingress and Egress", np.Spec.PolicyTypes)
	}
	admitted := map[string]bool{}
	for _, r := range np.Spec.Ingress {
		for _, p := range r.Ports {
			admitted[fmt.Sprint(p.Port)] = true
		}
	}
	for _, p := range onlyContainer(t, "deployment", m.deployment.Spec.Template).Ports {
		if !admitted[p.Name] {
			t.Errorf("container port %s (%d) is not admitted by the NetworkPolicy (admitted %v)", p.Name, p.ContainerPort, admitted)
		}
	}
}
