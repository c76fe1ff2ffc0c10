# crestspeed — build, test, demo.
# `make test` and `make demo` install the system packages they need
# (scripts/setup-deps) when pkg-config cannot find OpenCV and NetCDF.

GO       ?= go
BIN      := bin/crestspeed
VERSION  := $(shell git describe --tags --always --dirty 2>/dev/null || echo dev)
LDFLAGS  := -X main.version=$(VERSION)
PKGS     := ./...

.PHONY: all build deps demo test bench lint clean fuzz

all: build

deps:
	@pkg-config --exists opencv4 netcdf fftw3f 2>/dev/null && [ -x /usr/bin/ncdump ] && /usr/bin/python3 -c 'import numpy, scipy, netCDF4, xarray, cv2' 2>/dev/null \
		&& command -v sbatch >/dev/null && [ -x /usr/sbin/slurmctld ] && [ -x /usr/sbin/munged ] \
		|| scripts/setup-deps

build: deps
	$(GO) build -ldflags "$(LDFLAGS)" -o $(BIN) ./cmd/crestspeed

demo: build
	./$(BIN) demo --force

test: deps
	$(GO) vet $(PKGS)
	$(GO) test -count=1 -timeout 30m $(PKGS)
	FUZZTIME=$${FUZZTIME:-10s} scripts/fuzz-smoke

fuzz: deps
	FUZZTIME=$${FUZZTIME:-2m} scripts/fuzz-smoke

bench: build
	$(GO) test -run '^$$' -bench . -benchmem -benchtime 3x -timeout 60m $(PKGS)
	scripts/bench/track-vs-numpy $(BIN)
	scripts/bench/track-memory $(BIN)

lint:
	@out=$$(gofmt -l $$(git ls-files '*.go')); if [ -n "$$out" ]; then echo "gofmt needed:"; echo "$$out"; exit 1; fi
	$(GO) vet $(PKGS)

clean:
	rm -rf bin demo-output
