// Package linear is the linear baseline every sentence CNN is measured
// against: bag-of-n-grams TF-IDF features and a multinomial logistic
// regression with an L2 penalty, its strength chosen on the dev split.
//
// # Features
//
// A Vectorizer is fitted on the tokens of the training split. Its features
// are the n-grams of MinN to MaxN consecutive tokens (default 1 and 2, the
// tokens of an n-gram joined by one space) found in at least MinDF training
// texts, sorted by their text. A text's row holds, for each feature, its term
// frequency (raw count, or 1 + ln count with Sublinear) times the smoothed
// inverse document frequency idf = ln((1+n)/(1+df)) + 1 of the n training
// texts, and is scaled to unit Euclidean length. These are the definitions of
// scikit-learn's TfidfVectorizer (smooth_idf=True, norm="l2"), against which
// the package is tested live.
//
// # Classifier
//
// Fit minimises the mean cross-entropy of the softmax of W·x + b over the
// training rows plus the penalty ‖W‖²/(2·C·n) (the intercepts b are not
// penalised), which has the same minimiser as scikit-learn's multinomial
// LogisticRegression(C) objective C·Σ loss + ‖W‖²/2. With ClassWeight
// "balanced" each text's loss is weighted by n/(k·n_c), n_c being the number
// of training texts of its class among k classes (scikit-learn's
// class_weight="balanced"). The objective is minimised with gonum's L-BFGS
// (Liu & Nocedal 1989, "On the limited memory BFGS method for large scale
// optimization") over an equivalent problem of fewer weights with the same
// minimiser: features whose training columns are identical (the n-grams of
// one training text alone) share one weight, and two classes take one
// vector of weights w (class 1: w, class 0: −w). The regularisation
// strength C is chosen from a grid by a score on the dev split (the
// caller's; the sentence CNN uses dev macro-F1, as for its early
// stopping), the smallest C winning ties, each C's fit starting from the
// previous one's minimiser.
//
// Probabilities of the fitted model agree with scikit-learn's within 1e-3
// on the same features (tested live against Debian's python3-sklearn).
package linear
