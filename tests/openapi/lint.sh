#!/bin/sh
# Lints openapi/openapi.yaml with Redocly CLI (its recommended rules); fails on any error.
# Install the tool first with scripts/install-npm-tools.
set -eu

root=$(cd "$(dirname "$0")/../.." && pwd)
redocly="$root/tools/npm/node_modules/.bin/redocly"
if [ ! -x "$redocly" ]; then
  echo "lint.sh: $redocly is missing; run scripts/install-npm-tools" >&2
  exit 1
fi
cd "$root"
# redocly exits non-zero when the document has errors; its summary ends the output.
# No usage telemetry and no update check: the network here reaches package registries only.
REDOCLY_TELEMETRY=off REDOCLY_SUPPRESS_UPDATE_NOTICE=true exec "$redocly" lint openapi/openapi.yaml
