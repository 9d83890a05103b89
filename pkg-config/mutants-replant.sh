#!/usr/bin/env bash
# Plants again, one at a time, the mutants a cargo-mutants run missed, and
# runs the given tests against each: "CAUGHT" once a test written since
# fails, "MISSED" while none does. Each mutant is applied from the run's own
# diff and reverted afterwards; run it on a clean working tree, with no other
# build using it.
#
#   pkg-config/mutants-replant.sh OUTPUT [REGEX] -- CARGO-TEST-ARGS…
#   pkg-config/mutants-replant.sh /tmp/mutants 'percentile' -- --test=tolerance
#
# OUTPUT is the run's --output directory; REGEX picks mutants by name.
set -euo pipefail
out=$1; shift
filter=.
if [[ ${1:-} != -- ]]; then filter=$1; shift; fi
[[ ${1:-} == -- ]] && shift
cd "$(dirname "$0")/.."
python3 - "$out/mutants.out/outcomes.json" <<'PY' | { grep -E -- "$filter" || echo "no missed mutant matches $filter" >&2; } | while IFS=$'\t' read -r diff file name; do
import json, sys
for o in json.load(open(sys.argv[1]))["outcomes"]:
    if o.get("summary") == "MissedMutant":
        m = o["scenario"]["Mutant"]
        print(f'{o["diff_path"]}\t{m["file"]}\t{m["name"]}')
PY
  d="$out/mutants.out/$diff"
  if ! patch -s --dry-run --no-backup-if-mismatch "$file" < "$d" > /dev/null 2>&1; then echo "NOAPPLY $name"; continue; fi
  patch -s --no-backup-if-mismatch "$file" < "$d"
  if cargo test -q "$@" > /dev/null 2>&1; then echo "MISSED  $name"; else echo "CAUGHT  $name"; fi
  patch -s -R --no-backup-if-mismatch "$file" < "$d"
done
git diff --stat -- src
