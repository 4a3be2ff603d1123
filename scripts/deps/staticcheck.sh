# staticcheck (honnef.co/go/tools): unused code, dead assignments and
# simplifications that go vet does not report. Pinned; bump to refresh.
STATICCHECK_VERSION=v0.8.2
if ! staticcheck -version 2>/dev/null | grep -q "${STATICCHECK_VERSION#v}"; then
  go install "honnef.co/go/tools/cmd/staticcheck@$STATICCHECK_VERSION"
fi
