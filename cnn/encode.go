package cnn

import "telltale/corpus"

// EncodeDataset encodes the texts of ds with enc and maps its labels to
// indices into labels (usually the training split's). A label missing from
// labels is an error naming the example's file and line.
func EncodeDataset(enc *corpus.Encoder, ds *corpus.Dataset, labels []string, threads int) (Data, error) {
	y, err := ds.LabelIndex(labels)
	if err != nil {
		return Data{}, err
	}
	return Data{IDs: enc.EncodeAll(ds.Texts(), threads), Labels: y}, nil
}

// Encoder rebuilds the tokenizer and vocabulary m was trained with.
func (m *Model) Encoder() (*corpus.Encoder, error) {
	return corpus.NewEncoder(m.Tokenizer, m.Vocab)
}
