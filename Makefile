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
	$(GO) test ./sim/study -run='^$$' -fuzz=FuzzParse -fuzztime=$(FUZZTIME) -fuzzminimizetime=5s

# The performance benchmark: runner.Run against the hand-written floor loop on
# studies/bench_reference.toml in one process (cmd/deltabench), memory at
# 10^4 and 10^6 replicates per n (runner.Run alone and `deltaprobe run`), then
# the parts (sampling, transforms, accumulators, one replicate, regression
# fits) with -benchmem, then scripts/scale-bench.sh: peak memory, time and
# result.json size of run, -resume, merge and report at 10^4, 10^6 and 10^8
# replicates per n on studies/fuel.toml (several minutes). All of it goes to
# bench.txt. The machine may be shared: read the medians, and the share of
# CPU other processes took, which it prints.
bench: build
	$(GO) run ./cmd/deltabench -cli ./deltaprobe -o bench.txt
	$(GO) test ./sim/... -run='^$$' -bench=. -benchmem -count=1 > bench.txt.tmp
	@cat bench.txt.tmp
	@{ echo; echo "# parts: go test ./sim/... -run='^$$' -bench=. -benchmem"; cat bench.txt.tmp; } >> bench.txt
	@rm -f bench.txt.tmp
	bash scripts/scale-bench.sh ./deltaprobe studies/fuel.toml | tee bench.txt.tmp
	@{ echo; cat bench.txt.tmp; } >> bench.txt
	@rm -f bench.txt.tmp

clean:
	rm -rf out deltaprobe
