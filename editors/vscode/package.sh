#!/usr/bin/env bash
# Builds the editor package: editors/vscode/detent.vsix, with the packaging tool of the
# npm registry (@vscode/vsce, a dev dependency). Needs the npm registry for `npm ci`.
#
#   editors/vscode/package.sh
#
# Install it with `code --install-extension editors/vscode/detent.vsix`; the extension
# runs `detent lsp`, so put `detent` on PATH (`cargo install --path cli`) or set
# `detent.path`.
set -euo pipefail
cd "$(dirname "$0")"
npm ci --no-audit --no-fund
npm test
npx vsce package --skip-license -o detent.vsix
echo "wrote $(pwd)/detent.vsix"
