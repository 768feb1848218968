// Package reviewset reads the product-review sentences the recipe search
// and the accuracy tests use as real review data: the 1,000 Amazon
// cell-phone review sentences of the "Sentiment Labelled Sentences" set
// (Kotzias, Denil, de Freitas & Smyth 2015, "From Group to Individual
// Labels Using Deep Features", KDD; UCI Machine Learning Repository), as
// the npm package wink-sentiment 5.0.2 ships them in
// test/data/amazon_cells_labelled.txt and `make corpora` fetches them into
// testdata/reviews. Each line is a sentence, a tab and its label, 0
// (negative) or 1 (positive); there is no header.
//
// The set's other two sources, 1,000 Yelp and 1,000 IMDb sentences, come
// from the npm package sentiment 5.0.2 (test/fixtures/yelp.json and
// imdb.json, JSON arrays); LoadThreeUnder reads all three and
// SplitsOfSources cuts them into the same rotations, source by source.
//
// With so few texts one dev split decides little, so the set is used in
// ten stratified folds (Splits): fold k is the test split, fold k+1 the
// dev split, the other eight the training split.
package reviewset
