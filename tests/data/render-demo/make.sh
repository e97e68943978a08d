#!/usr/bin/env bash
# Regenerates tests/data/demo-matrix.json, the matrix behind the HTML browser check and the
# demo screenshot. Cells come from real `basefit plan` runs on the inputs beside this script;
# one undecided cell is taken from a run with a tiny solver budget, and the recorded installs
# are made up (the verify step is not in this branch) to show every kind of verdict.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../../.." && pwd)"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
args=(--registry "$here/registry.yaml" --images "$here/images.yaml" --priorities "$here/priorities.yaml")
cd "$root"
cargo run -q -- plan "${args[@]}" --out "$tmp/full" >/dev/null
cargo run -q -- plan "${args[@]}" --out "$tmp/tiny" --budget 3 >/dev/null
python3 - "$tmp/full/matrix.json" "$tmp/tiny/matrix.json" "$root/tests/data/demo-matrix.json" <<'PY'
import json, sys
full, tiny, out = sys.argv[1:]
m = json.load(open(full))
t = json.load(open(tiny))
def index(mat, package, image):
    return next(i for i, c in enumerate(mat["cells"]) if c["package"] == package and c["image"] == image)
i = index(m, "gullwing", "alpine-3.1")
m["cells"][i] = t["cells"][index(t, "gullwing", "alpine-3.1")]
recorded = {
    ("tidewater", "debian-3.1-slim"): dict(recorded="installed", verdict="agreed-install", version="2.4.0", detail="installed cleanly", attempts=2),
    ("tidewater", "ubi-3.1"): dict(recorded="installed", verdict="drift", version="2.4.1", detail="installed 2.4.1 where 2.4.0 was predicted: the registry snapshot is older than the install", attempts=1),
    ("kelp", "debian-3.1"): dict(recorded="installed", verdict="surprise-install", version="2.0.0", detail="the image already carries libxml2-dev from a base layer the image file does not declare", attempts=1),
    ("pearl", "alpine-3.1"): dict(recorded="failed", verdict="surprise-failure", detail="import failed: </script><script>alert(1)</script> symbol __memcpy_chk not found", attempts=3),
    ("driftwood", "debian-3.0"): dict(recorded="flaky", verdict="agreed-install", version="0.4.0", detail="2 of 3 attempts timed out fetching the source archive", attempts=3),
    ("diamond", "debian-3.0"): dict(recorded="failed", verdict="agreed-failure", detail="resolver reported conflicting requirements on base", attempts=1),
}
for (p, img), rec in recorded.items():
    m["cells"][index(m, p, img)]["recorded"] = rec
with open(out, "w") as f:
    json.dump(m, f, indent=2, ensure_ascii=False)
    f.write("\n")
PY
echo "wrote tests/data/demo-matrix.json"
