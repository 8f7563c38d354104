# basin: build, test, demo. Everything a fresh machine needs is installed here.
GO      ?= go
BIN     := bin/basin
PKGS    := ./...
FUZZTIME ?= 30s

.PHONY: all build test test-short demo bench fuzz lint scale clean browser

all: build

build:
	$(GO) build -o $(BIN) ./cmd/basin

lint:
	$(GO) vet $(PKGS)
	@out=$$(gofmt -l $$(git ls-files '*.go' 2>/dev/null || find . -name '*.go')); \
	if [ -n "$$out" ]; then echo "gofmt needed:"; echo "$$out"; exit 1; fi

# make test runs every test case, in two passes: everything under the race
# detector, where the heaviest single-goroutine cases (degree-4
# certificates, the derivative table, the false-certificate sweep, the SQL
# parity runs on SQLite and PostgreSQL; they call heavy(t) in fit,
# fit/export and validate) skip themselves, then ./fit/... and ./validate
# again without -race, where they run. (TestSQLSQLite alone passed 20
# minutes under -race at load 7.) The timeout is per
# package binary: the slowest package under -race on a loaded 2-core
# machine (load average about 24) took 5.5 minutes (cmd/basin), so 20
# minutes means a hang, not a slow machine. test-short is the inner loop:
# no end-to-end runs, no -race.
TEST_TIMEOUT ?= 20m

test: lint
	$(GO) test -race -count=1 -timeout $(TEST_TIMEOUT) $(PKGS)
	$(GO) test -count=1 -timeout $(TEST_TIMEOUT) ./fit/... ./validate

test-short:
	$(GO) test -short -count=1 -timeout 10m $(PKGS)

# The report's headless-browser check alone (it also runs inside `make test`
# whenever /usr/bin/chromium exists; .ci/run installs it).
browser:
	$(GO) test -count=1 -run 'TestBrowserRender' -v ./cmd/basin/internal/report/

demo: build
	./$(BIN) demo --out basin-demo

bench:
	$(GO) test -run '^$$' -bench . -benchmem $(PKGS)

fuzz:
	@for pkg in $$($(GO) list $(PKGS)); do \
	  for f in $$($(GO) test -list '^Fuzz' $$pkg 2>/dev/null | grep '^Fuzz'); do \
	    echo "fuzz $$pkg $$f"; \
	    $(GO) test -run '^$$' -fuzz "^$$f$$" -fuzztime $(FUZZTIME) $$pkg || exit 1; \
	  done; \
	done

clean:
	rm -rf bin basin-demo basin-out

# scale: basin run on 5 and 10 million samples (500 and 1,000 runs of
# 10,000 samples, 6 states, degree 3): wall time, peak memory and their
# ratio. Not part of make test (it takes minutes).
SCALE_DIR ?= /tmp/basin-scale
scale: build
	$(GO) run ./examples/scale -runs 500 -samples 10000 -out $(SCALE_DIR)/half
	$(GO) run ./examples/scale -runs 1000 -samples 10000 -out $(SCALE_DIR)/full
	$(GO) run ./examples/scale/measure "5e6 samples" ./$(BIN) run --quiet --out $(SCALE_DIR)/out-half $(SCALE_DIR)/half | tee $(SCALE_DIR)/half.txt
	$(GO) run ./examples/scale/measure "1e7 samples" ./$(BIN) run --quiet --out $(SCALE_DIR)/out-full $(SCALE_DIR)/full | tee $(SCALE_DIR)/full.txt
	@awk '/wall/ {w[NR]=$$4} END {printf "time ratio (1e7 / 5e6 samples): %.2f (target <= 2.3)\n", w[2]/w[1]}' $(SCALE_DIR)/half.txt $(SCALE_DIR)/full.txt

# bench-lp: fit/lp (SolveCuts and Solve) against HiGHS's dual simplex on
# the same certificate LP files, interleaved, with ratios and whether the
# optima agree. HiGHS comes from Debian's python3-scipy (installed here
# when missing) and is a yardstick only: basin never calls it.
.PHONY: bench-lp
BENCHLP_DIR ?= /tmp/basin-bench-lp
BENCHLP_FLAGS ?=
bench-lp:
	@/usr/bin/python3 -c 'import scipy.optimize' 2>/dev/null || \
	  { apt-get update && apt-get install -y --no-install-recommends python3-scipy; }
	$(GO) run ./fit/lp/internal/benchlp -dir $(BENCHLP_DIR) $(BENCHLP_FLAGS)
