// Command bench measures telltale's classifier side by side with a PyTorch
// reference implementation of the same recipe (bench/reference.py), on the
// same machine, the same thread count and the same encoded data.
//
// It is driven by bench/run.sh (`make bench`); its subcommands are
//
//	bench prepare -corpus synth -n N -out DIR   a seeded synthetic corpus
//	bench prepare -corpus spam -root R -out DIR the SpamAssassin corpus (subject + body)
//	bench train -dir DIR [-epochs E] [-threads T] [-json FILE]
//	bench tools -synth DIR -spam DIR [-json FILE]
//	bench cli -case C [-impl cli|torch-text] -texts N [-stdin FILE] [-out-lines N] [-stdout-json] -json FILE -- COMMAND…
//	bench explain-input -model M -data FILE [-tokens 200] [-n 100] -out FILE
//	bench table FILE...                          the ratio tables of result files
//
// prepare encodes the texts once with telltale's tokenizer and vocabulary and
// writes DIR/ids.bin (see writeIDs for the layout), which both this command
// and the reference read, so tokenization, vocabulary and labels are
// identical on both sides. train trains Kim's recipe as the reference has
// it (128-d embeddings, widths 3, 4, 5 × 100 feature maps, dropout 0.5, Adam 1e-3,
// batch 50, length-bucketed batches, no early stopping) and then times
// inference in batches of 100; it writes one JSON result per run. tools times
// the explanation work of the tool alone: filter profiles of a corpus, one
// explanation of a 200-token text with every single-token occlusion, and the
// spurious-cue audit.
//
// # The command line end to end
//
// cli times one command line as a user runs it: a process of its own, its
// standard input from a file, its output read through a pipe and counted
// (a predict run must print one line per text), wall time and peak
// resident set (getrusage) of the process. run.sh times this way telltale
// predict --json (SpamAssassin mails one per line, prepare -lines; the
// synthetic corpus, 20,000 texts and 1M lines for memory), train (the
// whole SpamAssassin corpus, prepare -whole -texts, against reference.py
// --text, the reference training script from the same text with its own
// tokenizing; with the linear baseline and with --baseline=false, both set
// beside the same reference runs), filters (1M synthetic texts), explain (texts of exactly 200
// tokens written by explain-input; one text, then 1,000, so that the cost of
// each explanation beyond the first is the difference) and audit
// (SpamAssassin; 100k synthetic texts). Predict is set beside the
// reference's eval-mode forward alone on the same texts (reference.py
// --infer-only: ids prepared and batches padded beforehand, batches of 100).
// table prints the medians of the runs with every run's load average, and
// ratios that read "higher is better".
//
// # Profiles of the command paths
//
// The root package's BenchmarkCommandLine (cli_bench_test.go) runs each
// command through run() in-process on the SpamAssassin corpus and, with
// -cli.profile DIR, writes a CPU profile of the timed runs alone and the
// allocation profiles before and after them:
//
//	GOEXPERIMENT=simd go test -run '^$' -bench CommandLine -benchtime 1x -args -cli.profile /tmp/prof
//	go tool pprof -top /tmp/prof/predict-json.cpu.pprof
//	go tool pprof -sample_index=alloc_space -top -base /tmp/prof/predict-json.allocs-before.pprof /tmp/prof/predict-json.allocs.pprof
//
// Any other command line, e.g. on the synthetic corpora that run.sh
// prepares (paths relative to the module root):
//
//	go test -run '^$' -bench CommandLine/args -benchtime 1x -args -cli.profile /tmp/prof \
//	    -cli.args "filters --model bench/out/synth-10000/cli.tt --data bench/out/synth-1000000/data.jsonl --json --quiet"
//	go test -run '^$' -bench CommandLine/args -benchtime 1x -args -cli.profile /tmp/prof \
//	    -cli.stdin bench/out/synth-1000000/lines-20000.txt -cli.args "predict --model bench/out/synth-10000/cli.tt --json"
package main
