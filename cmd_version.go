package main

import (
	"context"
	"flag"
	"fmt"
	"runtime"

	"telltale/cnn"
	"telltale/internal/outguard"
	"telltale/internal/version"
)

var cmdVersion = &command{
	Name:      "version",
	UsageLine: "version [--json]",
	Short:     "print telltale's version",
	Long: `Version prints the release of telltale, the source revision it was built
from when the build recorded one, the model file format it writes, and the Go
version it was built with. Every model file records the version that wrote it.`,
	Options: func() options { return new(versionOptions) },
	Run:     runAs(runVersion),
}

type versionOptions struct{ asJSON bool }

func (o *versionOptions) register(fs *flag.FlagSet) {
	fs.BoolVar(&o.asJSON, "json", false, "print the version as one JSON object")
}

func (o *versionOptions) check(*flag.FlagSet, *runEnv) error { return nil }

func (o *versionOptions) files() (outputs, inputs []outguard.File) { return nil, nil }

func runVersion(ctx context.Context, env *runEnv, o *versionOptions) error {
	if o.asJSON {
		return writeJSON(env.Stdout, map[string]any{"version": version.String(), "release": version.Release,
			"model_format": cnn.FormatVersion, "go": runtime.Version()})
	}
	_, err := fmt.Fprintf(env.Stdout, "telltale %s (model file format %d, %s)\n", version.String(), cnn.FormatVersion, runtime.Version())
	return err
}
