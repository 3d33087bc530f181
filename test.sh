#!/usr/bin/env bash
# The project's test command (README "Run the tests"; .ci/run calls it).
# Needs only Go and gcc (DuckDB is linked through cgo).
set -euo pipefail
cd "$(dirname "$0")"

echo "== gofmt"
unformatted=$(gofmt -l $(git ls-files '*.go' 2>/dev/null || find . -name '*.go' -not -path './.git/*'))
if [ -n "$unformatted" ]; then
  echo "gofmt would change:"; echo "$unformatted"; exit 1
fi

echo "== go vet"
go vet ./...

echo "== go test"
go test -count=1 ./... "$@"
