#!/usr/bin/env bash
# Install what the tests need (Chromium and poppler from Debian, the Python test
# dependencies into .venv) and run the whole suite, browser tests included.
# Fails when anything cannot be installed or started; never skips the browser.
set -euo pipefail
cd "$(dirname "$0")/.."

if ! command -v chromium >/dev/null || ! command -v pdftoppm >/dev/null; then
    if [ "$(id -u)" = 0 ]; then SUDO=""; else SUDO="sudo"; fi
    $SUDO apt-get update -qq
    DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends chromium poppler-utils >/dev/null
fi
chromium --version 2>/dev/null | grep -v "unexpected operator" || { echo "chromium cannot start" >&2; exit 1; }

[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/pip install -q --disable-pip-version-check -e '.[test]' 2>&1 | grep -v "is ignored: it is neither a file nor a directory" || true
.venv/bin/python -c "import showops, pytest, playwright" # the install above must have worked

set +e
.venv/bin/python -m pytest "$@"
status=$?
set -e
if [ "$status" = 5 ]; then
    echo "pytest collected no tests: treating that as a failure" >&2
    exit 1
fi
exit "$status"
