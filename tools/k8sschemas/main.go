// Command k8sschemas writes the JSON schemas kubeconform validates deploy/k8s against,
// from the OpenAPI (v2) document Kubernetes publishes with its source
// (api/openapi-spec/swagger.json of the module k8s.io/kubernetes), so that `make test`
// validates the manifests without a network. Run by `make k8s-schemas`.
//
// Each schema is one object kind, standalone and strict, as kubeconform names them
// (KIND-GROUP-VERSION.json, KIND-VERSION.json for the core group): the kind's definition
// with the definitions it refers to under "definitions" (the OpenAPI document's own
// "#/definitions/..." references then resolve inside the file), every object with
// properties closed to other properties (additionalProperties: false, as kubectl's
// validation), and int-or-string fields as either.
package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

func main() {
	spec := flag.String("spec", "", "the Kubernetes OpenAPI v2 document (swagger.json)")
	out := flag.String("out", "", "directory to write the schemas to")
	flag.Parse()
	kinds := flag.Args()
	if *spec == "" || *out == "" || len(kinds) == 0 {
		fmt.Fprintln(os.Stderr, "usage: k8sschemas -spec swagger.json -out DIR DEFINITION...\n  e.g. io.k8s.api.apps.v1.Deployment")
		os.Exit(2)
	}
	if err := run(*spec, *out, kinds); err != nil {
		fmt.Fprintln(os.Stderr, "k8sschemas:", err)
		os.Exit(1)
	}
}

func run(specPath, out string, kinds []string) error {
	raw, err := os.ReadFile(specPath)
	if err != nil {
		return err
	}
	var doc struct {
		Definitions map[string]any `json:"definitions"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		return fmt.Errorf("%s: %w", specPath, err)
	}
	if err := os.MkdirAll(out, 0o755); err != nil {
		return err
	}
	for _, k := range kinds {
		def, ok := doc.Definitions[k]
		if !ok {
			return fmt.Errorf("%s has no definition %s", specPath, k)
		}
		schema := strict(def).(map[string]any)
		reach := map[string]bool{}
		refs(def, doc.Definitions, reach)
		defs := map[string]any{}
		for name := range reach {
			defs[name] = strict(doc.Definitions[name])
		}
		schema["definitions"] = defs
		schema["$schema"] = "http://json-schema.org/schema#"
		name, err := fileName(def)
		if err != nil {
			return fmt.Errorf("%s: %w", k, err)
		}
		b, err := json.Marshal(schema)
		if err != nil {
			return err
		}
		if err := os.WriteFile(filepath.Join(out, name), append(b, '\n'), 0o644); err != nil {
			return err
		}
		fmt.Printf("%s -> %s (%d definitions)\n", k, name, len(defs))
	}
	return nil
}

// refs collects the definitions v refers to, transitively.
func refs(v any, all map[string]any, seen map[string]bool) {
	switch x := v.(type) {
	case map[string]any:
		if r, ok := x["$ref"].(string); ok {
			name := strings.TrimPrefix(r, "#/definitions/")
			if !seen[name] {
				seen[name] = true
				refs(all[name], all, seen)
			}
		}
		for _, e := range x {
			refs(e, all, seen)
		}
	case []any:
		for _, e := range x {
			refs(e, all, seen)
		}
	}
}

// strict copies a schema, closing every object with properties to other properties and
// turning int-or-string into either.
func strict(v any) any {
	switch x := v.(type) {
	case map[string]any:
		if x["format"] == "int-or-string" {
			return map[string]any{"oneOf": []any{map[string]any{"type": "string"}, map[string]any{"type": "integer"}}}
		}
		out := make(map[string]any, len(x)+1)
		for k, e := range x {
			if k == "properties" {
				props := map[string]any{}
				for p, s := range e.(map[string]any) {
					props[p] = strict(s)
				}
				out[k] = props
				continue
			}
			out[k] = strict(e)
		}
		if _, ok := x["properties"]; ok {
			if _, set := x["additionalProperties"]; !set {
				out["additionalProperties"] = false
			}
		}
		return out
	case []any:
		out := make([]any, len(x))
		for i, e := range x {
			out[i] = strict(e)
		}
		return out
	}
	return v
}

// fileName is kubeconform's name for the kind's schema: kind-group-version.json, the
// group's first label only, kind-version.json for the core group, all lower case.
func fileName(def any) (string, error) {
	gvks, _ := def.(map[string]any)["x-kubernetes-group-version-kind"].([]any)
	if len(gvks) == 0 {
		return "", fmt.Errorf("no x-kubernetes-group-version-kind")
	}
	var names []string
	for _, g := range gvks {
		m := g.(map[string]any)
		kind, group, version := m["kind"].(string), m["group"].(string), m["version"].(string)
		n := kind
		if group != "" {
			n += "-" + strings.Split(group, ".")[0]
		}
		names = append(names, strings.ToLower(n+"-"+version)+".json")
	}
	sort.Strings(names)
	return names[0], nil
}
