# Use the go.mod toolchain (fetched from the Go module proxy) even where GOTOOLCHAIN=local.
export GOTOOLCHAIN := $(shell sed -n 's/^toolchain //p' go.mod)

.PHONY: test build bench demo fuzz
build:
	go build ./...
test:
	bash scripts/test.sh
bench:
	go test -run '^$$' -bench . -benchmem ./...
fuzz:
	bash scripts/fuzz.sh 60s
demo:
	go run ./cmd/risewatch demo
