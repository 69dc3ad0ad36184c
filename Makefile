# memix: the two entry points of the README are `make demo` and `make test`.
GO      ?= go
BIN     := bin/memix
DEMO    ?= examples/demo.yaml
DEMOOUT ?= demo-out
# Printed by `memix version`; a build without it reports "dev".
VERSION ?= $(shell git describe --tags --always --dirty 2>/dev/null || echo dev)

.PHONY: setup build demo test test-slurm bench clean

setup:
	scripts/setup.sh

build: setup
	$(GO) build -ldflags "-X main.version=$(VERSION)" -o $(BIN) ./cmd/memix

demo: build
	scripts/demo.sh $(BIN) $(DEMO) $(DEMOOUT)

# The whole suite: vet, every package with the default (FFTW) backend, the
# transform and model packages again with the pure-Go FFT backend only.
test: setup
	$(GO) vet ./...
	$(GO) test -timeout 60m ./...
	$(GO) test -timeout 20m -tags nofftw ./spectral/... ./fields/...

bench: setup
	$(GO) test -run '^$$' -bench . -benchtime 2s ./...

clean:
	rm -rf bin $(DEMOOUT)
