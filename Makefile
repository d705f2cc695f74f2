# ridgeflank: `make help` lists the targets.
SHELL := /bin/bash
export PATH := /usr/local/go/bin:$(PATH)
GO ?= go
ADDR ?= 127.0.0.1:8080
DATA ?= ./data
BIN := bin/ridgeflank
VERSION ?= $(shell git describe --always --dirty 2>/dev/null || echo dev)
LDFLAGS := -X main.version=$(VERSION)
GO_TEST_FLAGS ?= -timeout 30m -p 2
# Global grid sizes measured by bench-scale (1m, 30s, 15s; comma-separated).
SCALE_SIZES ?= 1m,15s
# Pinned analysers, run through the Go module proxy with `go run` (nothing added to go.mod).
STATICCHECK ?= honnef.co/go/tools/cmd/staticcheck@v0.8.2
GOVULNCHECK ?= golang.org/x/vuln/cmd/govulncheck@v1.9.0
DEADCODE ?= golang.org/x/tools/cmd/deadcode@v0.45.0
# Database drivers the HTTP package must not link (job types live in jobs, the drivers in jobs/queue and store/*).
SERVER_FORBIDDEN_DEPS := riverpgxv5|riversqlite|modernc.org/sqlite|jackc/pgx
# Packages holding fuzz targets (func FuzzXxx); the targets themselves are listed with go test -list.
FUZZ_PKGS ?= ./geo ./ingest ./raster ./server ./thermal
FUZZTIME ?= 30s
# How many runs go test may spend minimising each new interesting input (a count, not a time: a
# time limit hit while minimising a slow target, such as the GDAL readers, fails the run with
# "context deadline exceeded"; its default, 60s, would also eat a short pass).
FUZZMINIMIZETIME ?= 200x

.PHONY: help run build web deps-build deps-test test test-web test-go lint fuzz fuzz-short deadcode fmt bench bench-all bench-scale loadtest clean

help: ## list the targets
	@grep -E '^[a-z-]+:.*## ' $(MAKEFILE_LIST) | sort | awk -F ':.*## ' '{printf "  %-11s %s\n", $$1, $$2}'

deps-build: ## install what the build needs (GDAL/PROJ dev files, gcc, npm) when missing
	@scripts/setup-build.sh

deps-test: deps-build ## install what the tests need (PostGIS, Chromium) and prepare the test database
	@scripts/setup-test.sh

web: ## install the page's npm packages (lockfile) and bundle the page into web/dist
	@cd web && { [ -d node_modules ] && [ node_modules/.package-lock.json -nt package-lock.json ] || npm ci --no-audit --no-fund --loglevel=error; } && npm run --silent build

build: deps-build web ## build bin/ridgeflank
	$(GO) build -ldflags '$(LDFLAGS)' -o $(BIN) ./cmd/ridgeflank

run: build ## build and serve on the embedded store in ./data (demo basin loaded on first start)
	$(BIN) serve --addr $(ADDR) --data $(DATA)

lint: ## fail on gofmt differences, go vet, staticcheck, an untidy go.mod, a database driver linked into server, or a known vulnerability (govulncheck, where its database is reachable)
	@out=$$(gofmt -l $$(git ls-files '*.go' 2>/dev/null || find . -name '*.go' -not -path './web/node_modules/*')); \
	  if [ -n "$$out" ]; then echo "gofmt would change:"; echo "$$out"; exit 1; fi
	$(GO) vet ./...
	@$(GO) mod tidy -diff >/dev/null || { echo "go mod tidy would change go.mod or go.sum (run go mod tidy):"; $(GO) mod tidy -diff; exit 1; }
	$(GO) run $(STATICCHECK) ./...
	@out=$$($(GO) list -deps ./server | grep -E '$(SERVER_FORBIDDEN_DEPS)'); \
	  if [ -n "$$out" ]; then echo "server links database drivers it must not:"; echo "$$out"; exit 1; fi
	@if curl -fsS -m 10 -o /dev/null https://vuln.go.dev/index/db.json 2>/dev/null; then \
	  $(GO) run $(GOVULNCHECK) ./...; \
	else echo "lint: govulncheck skipped: its vulnerability database (vuln.go.dev) cannot be reached from this machine"; fi

fuzz: deps-build ## run every fuzz target for FUZZTIME each (default 30s)
	@set -e; mkdir -p build/fuzz; cache=$$($(GO) env GOCACHE)/fuzz; \
	for pkg in $(FUZZ_PKGS); do \
	  bin=$(CURDIR)/build/fuzz/$$(basename $$pkg).test; \
	  $(GO) test -c -fuzz . -o $$bin $$pkg; \
	  dir=$$($(GO) list -f '{{.Dir}}' $$pkg); path=$$($(GO) list $$pkg); \
	  for t in $$(cd $$dir && $$bin -test.list '^Fuzz'); do \
	    echo "== $$pkg $$t for $(FUZZTIME)"; \
	    (cd $$dir && $$bin -test.run '^$$' -test.fuzz "^$$t\$$" -test.fuzztime $(FUZZTIME) \
	      -test.fuzzminimizetime $(FUZZMINIMIZETIME) -test.fuzzcachedir $$cache/$$path); \
	  done; \
	done

fuzz-short: ## run every fuzz target for 3s each (part of make test)
	@$(MAKE) --no-print-directory fuzz FUZZTIME=3s FUZZMINIMIZETIME=20x

deadcode: ## list functions the ridgeflank binary never reaches (a report; lint does not fail on it)
	$(GO) run $(DEADCODE) ./cmd/ridgeflank

test: deps-test web lint fuzz-short test-web test-go ## install test dependencies, bring up PostGIS, run every test

test-web: ## run the page's unit tests (npm test)
	@cd web && npm test --silent

test-go: ## run every Go test on SQLite and PostGIS (brings up the test database)
	@mkdir -p build/screenshots
	@if [ -e build/tools/weed.lock ]; then flock build/tools/weed.lock true; cat build/tools/weed.setup.log 2>/dev/null || true; fi
	@set -a; eval "$$(scripts/test-db.sh)"; set +a; \
	  if [ -z "$${RIDGEFLANK_TEST_WEED:-}" ] && [ -x build/tools/weed ]; then export RIDGEFLANK_TEST_WEED=$(CURDIR)/build/tools/weed; fi; \
	  RIDGEFLANK_SCREENSHOTS=$(CURDIR)/build/screenshots $(GO) test $(GO_TEST_FLAGS) ./...

bench: build ## run the chosen Go benchmarks and the load test; write docs/benchmarks.md (a few minutes)
	scripts/bench.sh

bench-all: deps-build web ## run every Go benchmark (long; no report)
	$(GO) test -run '^$$' -bench . -benchmem ./...

loadtest: build ## serve bin/ridgeflank on 127.0.0.1 (embedded store, then PostGIS) and load it for 20 s each
	scripts/loadtest.sh $(LOADTEST_FLAGS)

bench-scale: build ## measure import and serving at global sizes (SCALE_SIZES=1m,15s) on SYNTHETIC grids; writes build/scale/report.md
	SCALE_SIZES=$(SCALE_SIZES) BIN=$(BIN) scripts/bench-scale.sh

fmt: ## gofmt every Go file
	gofmt -w $$(git ls-files '*.go')

clean: ## remove build outputs (keeps ./data)
	rm -rf bin build web/dist/assets web/dist/*.js web/dist/*.css web/dist/*.map web/dist/*.html
