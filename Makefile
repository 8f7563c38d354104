# basin: build, test, demo. Everything a fresh machine needs is installed here.
GO      ?= go
BIN     := bin/basin
PKGS    := ./...
FUZZTIME ?= 30s

.PHONY: all build test demo bench fuzz lint scale clean browser

all: build

build:
	$(GO) build -o $(BIN) ./cmd/basin

lint:
	$(GO) vet $(PKGS)
	@out=$$(gofmt -l $$(git ls-files '*.go' 2>/dev/null || find . -name '*.go')); \
	if [ -n "$$out" ]; then echo "gofmt needed:"; echo "$$out"; exit 1; fi

test: lint
	$(GO) test -race -count=1 $(PKGS)

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
