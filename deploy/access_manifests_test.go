package deploy_test

import (
	"slices"
	"strings"
	"testing"
)

// volumes is the part of a pod spec the access tests read.
type volumes struct {
	Spec struct {
		Template struct {
			Spec struct {
				Containers []struct {
					Args []string `json:"args"`
					Env  []struct {
						Name  string `json:"name"`
						Value string `json:"value"`
					} `json:"env"`
					VolumeMounts []struct {
						Name      string `json:"name"`
						MountPath string `json:"mountPath"`
					} `json:"volumeMounts"`
				} `json:"containers"`
				Volumes []struct {
					Name   string `json:"name"`
					Secret *struct {
						SecretName string `json:"secretName"`
						Optional   *bool  `json:"optional"`
						Items      []struct {
							Key  string `json:"key"`
							Path string `json:"path"`
						} `json:"items"`
					} `json:"secret"`
				} `json:"volumes"`
			} `json:"spec"`
		} `json:"template"`
	} `json:"spec"`
}

// TestServerNeedsNoOptionalFile: the server is given no file flag (HALOVET_*_FILE,
// HALOVET_TLS_*) under an optional Secret volume, since serve stops on a file it cannot
// read; a fresh install without the bootstrap key therefore starts (and answers only
// health and reflection until a credential exists).
func TestServerNeedsNoOptionalFile(t *testing.T) {
	var d volumes
	load(t, "k8s/deployment.yaml", &d)
	optional := map[string]bool{}
	for _, v := range d.Spec.Template.Spec.Volumes {
		if v.Secret != nil && v.Secret.Optional != nil && *v.Secret.Optional {
			optional[v.Name] = true
		}
	}
	for _, c := range d.Spec.Template.Spec.Containers {
		for _, e := range c.Env {
			if e.Name == "HALOVET_ADMIN_TOKEN_FILE" || e.Name == "HALOVET_BOOTSTRAP_CREDENTIAL_FILE" {
				t.Errorf("the Deployment sets %s; the bootstrap credential is stored by bootstrap-job.example.yaml", e.Name)
			}
			for _, m := range c.VolumeMounts {
				if optional[m.Name] && strings.HasPrefix(e.Value, m.MountPath) {
					t.Errorf("%s = %s lies under the optional Secret volume %s: serve stops when the file is absent", e.Name, e.Value, m.Name)
				}
			}
		}
	}
}

// TestBootstrapJobReadsTheExampleSecretKey: the bootstrap Job stores the secret from the
// file its Secret volume provides, under a key secret.example.yaml documents, with the
// verb's own flags, never printing it.
func TestBootstrapJobReadsTheExampleSecretKey(t *testing.T) {
	var j volumes
	load(t, "k8s/bootstrap-job.example.yaml", &j)
	m := loadManifests(t)
	spec := j.Spec.Template.Spec
	if len(spec.Containers) != 1 || len(spec.Volumes) != 1 || spec.Volumes[0].Secret == nil {
		t.Fatalf("bootstrap Job: %d containers, %d volumes; want one of each, a Secret volume", len(spec.Containers), len(spec.Volumes))
	}
	c, v := spec.Containers[0], spec.Volumes[0]
	if !slices.Equal(c.Args[:2], []string{"credentials", "issue"}) || slices.Contains(c.Args, "--secret-file") {
		t.Errorf("bootstrap args %v; want credentials issue storing a given secret", c.Args)
	}
	i := slices.Index(c.Args, "--secret-from-file")
	if i < 0 || i+1 >= len(c.Args) || len(c.VolumeMounts) != 1 || len(v.Secret.Items) != 1 {
		t.Fatalf("bootstrap args %v, mounts %+v; want --secret-from-file FILE from the one mount", c.Args, c.VolumeMounts)
	}
	if want := c.VolumeMounts[0].MountPath + "/" + v.Secret.Items[0].Path; c.Args[i+1] != want {
		t.Errorf("--secret-from-file %s; the Secret's file is at %s", c.Args[i+1], want)
	}
	if v.Secret.SecretName != m.secret.Metadata.Name {
		t.Errorf("bootstrap reads Secret %q; secret.example.yaml defines %q", v.Secret.SecretName, m.secret.Metadata.Name)
	}
	if _, ok := m.secret.StringData[v.Secret.Items[0].Key]; !ok {
		t.Errorf("bootstrap key %q is not in secret.example.yaml (keys %v)", v.Secret.Items[0].Key, m.secret.StringData)
	}
	if v.Secret.Optional != nil && *v.Secret.Optional {
		t.Error("the bootstrap Job's Secret volume is optional: the Job would succeed doing nothing")
	}
	if !slices.Contains(c.Args, "officer") {
		t.Errorf("bootstrap args %v; want --role officer", c.Args)
	}
}
