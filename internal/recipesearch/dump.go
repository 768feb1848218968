package main

import (
	"encoding/json"
	"io"
	"path/filepath"

	"telltale/corpus"
	"telltale/internal/atomicfile"
)

// dumpSplits writes each split of sp as dir/CORPUS-SPLIT.jsonl, one JSON
// object with "text" and "label" per line, for pooling.py.
func dumpSplits(sp splits, which, dir string) error {
	for _, s := range []struct {
		name string
		ds   *corpus.Dataset
	}{{"train", sp.train}, {"dev", sp.dev}, {"test", sp.test}} {
		if s.ds == nil {
			continue
		}
		err := atomicfile.Write(filepath.Join(dir, which+"-"+s.name+".jsonl"), func(w io.Writer) error {
			enc := json.NewEncoder(w)
			for _, e := range s.ds.Examples {
				if err := enc.Encode(map[string]string{"text": e.Text, "label": e.Label}); err != nil {
					return err
				}
			}
			return nil
		})
		if err != nil {
			return err
		}
	}
	return nil
}
