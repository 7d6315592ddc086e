# gaptrace: make demo runs the built-in demo, make test runs the tests.
GO      ?= go
BIN     := bin/gaptrace
DEMO    ?= demo-out
# Tests run with gocv's matprofile tag so that every package can assert
# that no OpenCV Mat leaked.
TAGS    := matprofile

# Fuzz targets (package:target). `make test` replays the corpus of each:
# go test runs every Fuzz function on its seeds and on the inputs checked
# in under its package's testdata/fuzz/TARGET (Go's layout);
# `make fuzz` searches further, FUZZTIME each, one after another on one
# core (found crashers land in that folder).
FUZZ     := calib/experiment:FuzzParse calib/rheolog:FuzzRead calib:FuzzLoad \
            track/tracks:FuzzReadCSV track/frames:FuzzStills cmd/gaptrace:FuzzRunVideo
FUZZTIME ?= 10m

.PHONY: all deps test-deps build test fuzz demo bench clean

all: build

deps:
	@cmd/scripts/deps.sh

test-deps:
	@cmd/scripts/deps.sh --test

build: deps
	$(GO) build -o $(BIN) ./cmd/gaptrace

test: test-deps build
	$(GO) vet -tags $(TAGS) ./...
	$(GO) test -tags $(TAGS) -count=1 -timeout 40m ./...
	$(GO) test -tags $(TAGS) -race -count=1 -run 'Parallel|Race' -timeout 20m ./track/...

fuzz: test-deps
	@for t in $(FUZZ); do pkg=$${t%%:*}; name=$${t##*:}; \
	  $(GO) test -tags $(TAGS) -run '^$$' -fuzz "^$$name$$" -fuzztime $(FUZZTIME) -parallel 1 ./$$pkg || exit 1; \
	done

demo: build
	$(BIN) demo --force -o $(DEMO)

bench: test-deps build
	$(GO) test -run '^$$' -bench . -benchtime 2x ./...
	cmd/scripts/bench-track.sh

clean:
	rm -rf bin $(DEMO)
