# halovet — run `make help` for the targets.
SHELL := /usr/bin/env bash
.SHELLFLAGS := -eu -o pipefail -c
GO ?= go
BUF := $(GO) tool -modfile=tools/go.mod buf
BIN := bin/halovet
# A count, not a duration: a duration-based -fuzztime can fail with "context deadline
# exceeded" on a loaded machine (a race in Go 1.26's fuzz coordinator, golang/go#75804).
FUZZTIME ?= 20000x

.DEFAULT_GOAL := help
.PHONY: fault-long help demo test generate lint breaking breaking-release fmt-check tidy-check vet staticcheck drift unit bench-once fuzz bench build postgres cc kubeconform kube-schemas bench-load bench-register chromium

help: ## list the targets
	@grep -hE '^[a-z-]+:.*## ' $(MAKEFILE_LIST) | awk -F':.*## ' '{printf "  make %-10s %s\n", $$1, $$2}'

# The version and commit stamped into the binary (halovet version, the logs, the
# halovet_build_info metric, the halovet-version header of every answer).
VERSION ?= $(shell git describe --tags --always --dirty 2>/dev/null || echo '(devel)')
COMMIT ?= $(shell git rev-parse HEAD 2>/dev/null || echo unknown)
LDFLAGS := -X 'main.version=$(VERSION)' -X 'main.commit=$(COMMIT)'

build: ## build bin/halovet (version and commit stamped)
	$(GO) build -ldflags "$(LDFLAGS)" -o $(BIN) ./cmd/halovet

postgres: ## make sure PostgreSQL server binaries are installed (apt-get if missing)
	@scripts/ensure-postgres.sh

chromium: ## make sure Debian's chromium is installed for the console's browser test (apt-get if missing)
	@scripts/ensure-chromium.sh >/dev/null

cc: ## make sure a C compiler is installed for go test -race (apt-get if missing)
	@scripts/ensure-cc.sh

demo: postgres build ## run the demo scenario end to end on a private PostgreSQL cluster
	$(BIN) demo

test: fmt-check tidy-check vet staticcheck drift lint kubeconform postgres cc chromium unit bench-once fuzz ## everything CI runs: format, go.mod tidiness, vet, generated-code drift, buf lint, tests, every benchmark once, fuzz
	@echo "make test: all checks passed"

fmt-check: ## fail when gofmt would change a tracked Go file (needs a git checkout: it checks what git tracks)
	@files=$$(git ls-files '*.go') || { echo "fmt-check: not a git checkout; clone the repository to run the checks"; exit 1; }; \
	[ -n "$$files" ] || { echo "fmt-check: git tracks no Go files here; is this the repository?"; exit 1; }; \
	out=$$(gofmt -l $$(echo "$$files" | grep -v '\.pb\.go$$')); \
	if [ -n "$$out" ]; then echo "gofmt would change:"; echo "$$out"; exit 1; fi

tidy-check: ## fail when go.mod or go.sum (of the module or of tools/) would change under go mod tidy
	$(GO) mod tidy -diff
	cd tools && $(GO) mod tidy -diff

vet:
	$(GO) vet ./...

staticcheck: ## staticcheck (pinned in tools/go.mod) over every package
	$(GO) tool -modfile=tools/go.mod staticcheck ./...

generate: ## regenerate the Go code from proto/ with buf and local plugins, and the documented descriptor set
	$(BUF) generate
	$(BUF) build --as-file-descriptor-set -o proto/halovet/v1/descriptors.binpb

drift: generate ## fail when the committed generated code differs from a fresh generation
	@if [ -n "$$(git status --porcelain -- proto)" ]; then \
	  echo "generated code in proto/ is not current; run 'make generate' and commit:"; \
	  git status --porcelain -- proto; exit 1; fi

lint: ## buf lint and buf format check of proto/
	$(BUF) lint
	$(BUF) format -d --exit-code

breaking: ## buf breaking-change check of proto/ against the main branch (run on a topic branch)
	$(BUF) breaking --against '.git#branch=main'

# The previous release point CHANGELOG.md names; what buf breaking reports against it is
# recorded there ("buf breaking against the previous release point").
RELEASE_POINT ?= 0dac6b6
breaking-release: ## buf breaking-change check of proto/ against RELEASE_POINT (the previous release point in CHANGELOG.md); offline, from git
	@tmp=$$(mktemp -d); trap 'rm -rf "$$tmp"' EXIT; \
	git archive $(RELEASE_POINT) buf.yaml proto $$(git ls-tree --name-only $(RELEASE_POINT) third_party) | tar -x -C "$$tmp"; \
	$(BUF) build "$$tmp" --path "$$tmp/proto/halovet" -o "$$tmp/base.binpb"; \
	$(BUF) build --path proto/halovet -o "$$tmp/current.binpb"; \
	$(BUF) breaking "$$tmp/current.binpb" --against "$$tmp/base.binpb"

unit:
	$(GO) test -race -count=1 ./...

# Every benchmark once, so one that no longer runs (a changed input format, a removed
# call) fails here and not on the day someone measures; it times nothing.
bench-once: ## run every Go benchmark for one iteration (a check that they still run, not a measurement)
	$(GO) test -count=1 -run='^$$' -bench=. -benchtime=1x ./...

fuzz: ## run every fuzz target for FUZZTIME executions (default 20000x; a duration also works)
	@log=$$(mktemp); trap 'rm -f "$$log"' EXIT; \
	grep -rlE --include='*_test.go' '^func Fuzz' . | while read -r f; do \
	  pkg=./$$(dirname "$${f#./}"); \
	  for t in $$(grep -oE '^func Fuzz[A-Za-z0-9_]+' "$$f" | sed 's/^func //'); do \
	    echo "fuzz $$pkg $$t"; \
	    $(GO) test -run='^$$' -fuzz="^$$t$$" -fuzztime=$(FUZZTIME) "$$pkg" >"$$log" 2>&1 || { cat "$$log"; exit 1; }; \
	  done; \
	done

# The Kubernetes release whose API the manifests are validated against; its schemas are
# kept in deploy/schemas/ (make kube-schemas writes them from the module's OpenAPI document).
K8S_VERSION := 1.34.2
K8S_SCHEMAS := deploy/schemas/k8s-v1.34
K8S_KINDS := io.k8s.api.apps.v1.Deployment io.k8s.api.batch.v1.Job io.k8s.api.core.v1.Service \
	io.k8s.api.core.v1.ConfigMap io.k8s.api.core.v1.Secret io.k8s.api.policy.v1.PodDisruptionBudget \
	io.k8s.api.networking.v1.NetworkPolicy

kubeconform: ## validate deploy/k8s with kubeconform (pinned in tools/) against the schemas in deploy/schemas (no network)
	$(GO) tool -modfile=tools/go.mod kubeconform -strict -summary -skip Kustomization -ignore-filename-pattern 'patch\.example\.yaml$$' \
	  -schema-location '$(K8S_SCHEMAS)/{{ .ResourceKind }}{{ .KindSuffix }}.json' deploy/k8s

kube-schemas: ## rewrite deploy/schemas from the OpenAPI document of k8s.io/kubernetes@v$(K8S_VERSION) (downloads the module)
	spec=$$($(GO) mod download -json k8s.io/kubernetes@v$(K8S_VERSION) | sed -n 's/^[[:space:]]*"Dir": "\(.*\)",$$/\1/p')/api/openapi-spec/swagger.json; \
	rm -rf $(K8S_SCHEMAS); $(GO) run -C tools ./k8sschemas -spec "$$spec" -out "$(CURDIR)/$(K8S_SCHEMAS)" $(K8S_KINDS)

bench-load: postgres ## load benchmark: halovet serve on a private cluster, 50 calls in flight over 4 connections (cmd/loadbench; see BENCHMARKS.md)
	$(GO) run ./cmd/loadbench -repo .

bench-register: postgres ## report benchmark: 1,000,000 invented shipments over five years on a private cluster (or TEST_DATABASE_URL), report queries timed with their plans (cmd/registerbench; see BENCHMARKS.md)
	$(GO) run ./cmd/registerbench

FAULT_ROUNDS ?= 20
fault-long: postgres ## the fault scenarios again, FAULT_ROUNDS rounds of random faults (database restart, server cut, client gone, replicas racing) with exact recounts; HALOVET_FAULT_SEED=N repeats a run
	HALOVET_FAULT_ROUNDS=$(FAULT_ROUNDS) $(GO) test -count=1 -timeout 30m -run '^TestFault' -v ./service/

bench: ## run the Go benchmarks (see BENCHMARKS.md)
	$(GO) test -run='^$$' -bench=. -benchmem ./...
