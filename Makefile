# gaptrace: make demo runs the built-in demo, make test runs the tests.
GO      ?= go
BIN     := bin/gaptrace
DEMO    ?= demo-out
# Tests run with gocv's matprofile tag so that every package can assert
# that no OpenCV Mat leaked.
TAGS    := matprofile

.PHONY: all deps test-deps build test demo bench clean

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

demo: build
	$(BIN) demo --force -o $(DEMO)

bench: test-deps build
	$(GO) test -run '^$$' -bench . -benchtime 2x ./...
	cmd/scripts/bench-track.sh

clean:
	rm -rf bin $(DEMO)
