# Dockerfile linter (npm dockerfile-utils) for deploy tests.
if [ ! -x deploy/testdata/lint/node_modules/.bin/dockerfile-utils ]; then
  (cd deploy/testdata/lint && npm ci --silent --no-audit --no-fund >/dev/null)
fi
