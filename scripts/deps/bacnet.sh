# collector/bacnet interop test: the independent BACnet stack @bacnet-js/client
# (MIT, npm registry), installed from the committed package-lock.json. npm comes
# with some Node builds; Debian ships it separately. Idempotent.
if ! command -v npm >/dev/null 2>&1; then
  if [ "$(id -u)" = 0 ]; then DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends npm >/dev/null
  else sudo env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends npm >/dev/null; fi
fi
if [ ! -f collector/bacnet/testdata/interop/node_modules/@bacnet-js/client/package.json ]; then
  (cd collector/bacnet/testdata/interop && npm ci --silent --no-audit --no-fund >/dev/null) ||
    { echo "bacnet.sh: npm ci in collector/bacnet/testdata/interop failed" >&2; return 1 2>/dev/null || exit 1; }
fi
