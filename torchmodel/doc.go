// Package torchmodel brings sentence CNNs trained in PyTorch into telltale
// and hands telltale's models back to PyTorch.
//
// # Import
//
// Import reads a state_dict saved with torch.save (through package
// statedict, which runs nothing the file asks for), finds its parts by shape
// and order (DetectLayout) or as a Layout names them, and builds a cnn.Model
// with the vocabulary (ReadVocab), the label names and the tokenizer
// settings given. Supported: one embedding table, or two for the
// multichannel variant of Kim (2014); one convolution per filter width as
// nn.Conv1d(d, m, k) or nn.Conv2d(1, m, (k, d)) (nn.Conv2d(2, m, (k, d))
// over the two tables of the multichannel variant, which is one table of
// dimension 2d with the channels' weights side by side); one nn.Linear
// output layer, or a single sigmoid unit; beside them, the word-weight
// table of the wide path (an nn.EmbeddingBag(mode="mean", padding_idx=pad)
// whose output is added to the logits) under the key "wide.weight" or found
// by its shape; and the character layer Export writes (keys chars.…, see
// chars.go). Every key of the state_dict must
// be one of these parts: anything else (batch normalisation, a recurrent
// layer, attention, a second linear layer, filters of different counts per
// width) is refused naming the key and its shape. Import's documentation
// lists what a state_dict cannot tell (the activation, the pooling, the
// convolutions' padding) and how the padding token is handled.
//
// # Export
//
// Export writes a model's weights as the state_dict of a small PyTorch
// module (the README's "Bring your own model" holds it), as NumPy's .npz
// (package npy), which PyTorch users load without pickle, with the
// vocabulary and the labels beside it. Masked filters are exported with
// zero output weights, which gives exactly the masked model's logits; the
// wide path's table (cnn.Config.Wide) as "wide.weight", its bigram
// weights (cnn.Config.WideBigrams) as "wide_bigram.weight" with their
// pairs' keys "bigram_keys", which Import reads back; a character layer
// (cnn.Config.Chars) as its weights, its alphabet and each word's character
// ids, from which the module computes the character part of word vectors
// as telltale does, for words outside the vocabulary too.
//
// Both directions are checked against PyTorch itself (Debian's
// python3-torch) on texts of the SpamAssassin corpus.
package torchmodel
