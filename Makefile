# Targets for contributors; CI runs .ci/run, which calls `go test ./...`.
GO ?= go

.PHONY: all build test vet fmt examples fuzz bench clean

all: vet test

build:
	$(GO) build -o deltaprobe ./cmd/deltaprobe

test:
	$(GO) test ./...

vet:
	$(GO) vet ./...
	@test -z "$$(gofmt -l .)" || (echo "gofmt needed:"; gofmt -l .; exit 1)

# Run every example study in full into out/.
examples: build
	@for s in studies/*.toml; do ./deltaprobe run $$s -force -quiet || exit 1; done

FUZZTIME ?= 20s
fuzz:
	$(GO) test ./sim/expr -run='^$$' -fuzz=FuzzCompile -fuzztime=$(FUZZTIME) -fuzzminimizetime=5s
	$(GO) test ./sim -run='^$$' -fuzz=FuzzParse -fuzztime=$(FUZZTIME) -fuzzminimizetime=5s

bench:
	$(GO) test ./... -run='^$$' -bench=. -benchmem

clean:
	rm -rf out deltaprobe
