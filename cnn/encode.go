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

// Encoder rebuilds the tokenizer and vocabulary m was trained with. It cuts
// texts to the length the model was trained on (its recipe's MaxLen), so
// predictions and explanations see what training saw.
func (m *Model) Encoder() (*corpus.Encoder, error) {
	enc, err := corpus.NewEncoder(m.Tokenizer, m.Vocab)
	if err != nil {
		return nil, err
	}
	if m.Info.Recipe != nil {
		enc.MaxTokens = m.Info.Recipe.MaxLen
	}
	return enc, nil
}
