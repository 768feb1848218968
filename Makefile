# telltale — the two commands of the README are `make demo` and `make test`.
# Both install what they need on a fresh Debian machine (as root, or via sudo).

SHELL := /bin/bash
GO ?= go
# The fast float32 kernels use Go 1.26's experimental SIMD package; the
# portable kernels are used when this is emptied (make GOEXPERIMENT= build).
export GOEXPERIMENT ?= simd
BIN := bin/telltale

# Debian packages: building the window (cgo + GL), and the outside references
# and browsers the tests check against.
GUI_PKGS  := gcc libc6-dev pkg-config libgl1-mesa-dev libx11-dev libxcursor-dev \
             libxrandr-dev libxinerama-dev libxi-dev libxxf86vm-dev
TEST_PKGS := gcc libc6-dev python3 python3-torch python3-sklearn python3-scipy python3-numpy python3-pandas \
             chromium xvfb xdotool ca-certificates
SHOT_PKGS := $(GUI_PKGS) xvfb xdotool imagemagick fonts-dejavu-core

.PHONY: all build demo test test-go test-portable test-race test-race-pkgs test-race-cli fuzz soak soak-checks vet bench screenshots deps-gui deps-test corpora clean

all: build

deps-gui:
	@scripts/ensure-debian-packages.sh $(GUI_PKGS)

deps-test:
	@scripts/ensure-debian-packages.sh $(TEST_PKGS)

corpora:
	@scripts/fetch-corpora.sh

build: deps-gui
	$(GO) build -o $(BIN) .

# The tour on the demo corpus: summary, training, evaluation, an
# explanation, the audit and the report; then the window, when
# there is a display.
demo: build
	@scripts/demo.sh $(BIN)

test: deps-test corpora vet test-go test-race-pkgs soak-checks

vet:
	$(GO) vet -tags ci ./...

# Every test, with the software GUI driver (tag ci: no GL or X needed).
test-go:
	CI=true $(GO) test -tags ci -count=1 -timeout 20m ./...

# The portable kernels (no SIMD) must give the same results.
test-portable:
	GOEXPERIMENT= CI=true $(GO) test -tags ci -count=1 -run 'Kernel|Predict|Forward|Table|MatMul|Dot' ./cnn ./explain ./internal/f32

# The race detector over the training, baseline, profiling, audit,
# GUI-state and ordered-worker packages (test-race-pkgs; short mode leaves
# out the long corpus-scale runs), then the command line's explain on
# several workers (test-race-cli). The longest package first (go test
# schedules the packages in the order given, two at a time), so that the
# GUI's run does not start last and end alone.
test-race: test-race-pkgs test-race-cli

test-race-pkgs:
	CI=true $(GO) test -tags ci -race -short -count=1 -timeout 20m ./gui ./explain ./cnn ./audit ./corpus ./linear ./internal/inorder

test-race-cli:
	CI=true $(GO) test -tags ci -race -count=1 -run 'TestExplainThreadsSameOutput|TestExplainStopsAtWriteError' .

# Each fuzz target for a short, fixed run, from one instrumented test
# binary per package (scripts/fuzz.sh).
# A fixed number of executions rather than seconds: a time budget can end in
# the middle of the fuzzer minimizing a new input, which it then reports as a
# failure ("context deadline exceeded") although no input failed.
FUZZTIME ?= 4000x
fuzz:
	@GO=$(GO) scripts/fuzz.sh $(FUZZTIME)

# The soak with the last checks beside it (scripts/together.sh): the soak
# keeps about one core busy for its fixed time, so the fuzz targets, the
# portable kernels and the race detector's run of the command line go one
# after another on what it leaves (at a lower priority, nice 10: the window
# comes first, as when the soak runs alone, but it must keep answering with
# them running). Each side's output comes as a block when it ends; either
# failing fails the target and stops the other. `make test` runs this.
# The checks' side is a make of its own, named through SUBMAKE: a recipe
# line that names $(MAKE) itself is run even by `make -n`, and this one
# would start the soak. (Under make -j the checks' make then runs one job at
# a time, saying so, as it does under plain `make test`.)
SUBMAKE = $(MAKE)
soak-checks: build
	@scripts/ensure-debian-packages.sh xvfb xdotool
	@scripts/together.sh 'fuzz, portable kernels, race on the command line' \
		'nice -n 10 $(SUBMAKE) --no-print-directory fuzz test-portable test-race-cli' soak 'scripts/soak.sh $(BIN)'

# The real window under Xvfb for about two and a half minutes, driven with
# xdotool (train, retrain, search and scroll the filter list, the audit,
# explanations, rows that open other views): it must keep answering.
soak: build
	@scripts/ensure-debian-packages.sh xvfb xdotool
	@scripts/soak.sh $(BIN)

# The command line end to end, then training and inference through the Go
# API, against the PyTorch reference (bench/RESULTS.md). BENCH_QUICK=1 is a
# smoke run of a few minutes; BENCH_PART=cli or api runs one part; REPS sets
# the repetitions (default 3).
bench: deps-test corpora build
	@bench/run.sh $(BIN)

screenshots:
	@scripts/ensure-debian-packages.sh $(SHOT_PKGS) chromium
	@scripts/screenshots.sh
	@scripts/report-screenshot.sh

clean:
	rm -rf bin testdata/spamassassin testdata/afinn testdata/sotu testdata/reviews bench/out
