// Package glossary defines, one line each with its formula, the terms that
// telltale names itself: the words a reader cannot look up elsewhere (slot
// score, log-odds units, centred votes, vote margin, selectivity threshold, selective,
// negative n-gram, family, stability, trigger and suppressor words,
// identified shares, centred logit, bias parts, kept-down window, occlusion
// as telltale measures it, and the cue audit's terms). Terms of the trade (filter, n-gram, attribution, F1,
// confusion matrix…) are not repeated here.
//
// The window's Help › Glossary lists Terms; the README's "Glossary" section
// is Markdown(), kept equal to it by a test (go test ./internal/glossary
// -update rewrites the section).
//
// A formula uses the model's own symbols: Emb[w] is word w's embedding,
// W_g[s] slot s of filter g's weights, B_g its bias, h_g its pooled
// activation, OutW[c][g] and OutB[c] the output layer, p(c) the predicted
// probability of class c, ŷ the predicted class, r the runner-up (the class
// with the next largest probability), C the number of classes and e_c the
// unit vector of class c. A model with the wide path adds Wide[w][c], word
// w's weight for class c, averaged over the text's N words (ids other than
// padding) x_t; UNK is the unknown word.
package glossary
