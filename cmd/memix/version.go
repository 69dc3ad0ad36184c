package main

import (
	"runtime"
	"runtime/debug"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/spectral"
)

func init() { register(newVersionCmd) }

func newVersionCmd(e *env) *cobra.Command {
	var out report.Flags
	cmd := &cobra.Command{
		Use:   "version",
		Short: "Print the version, the Go version and the FFT backends",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			var backends []string
			for _, b := range spectral.Backends() {
				backends = append(backends, string(b))
			}
			fields := []report.Field{
				{Key: "version", Title: "memix", Value: version},
				{Key: "go", Title: "Go", Value: runtime.Version()},
				{Key: "platform", Title: "platform", Value: runtime.GOOS + "/" + runtime.GOARCH},
				{Key: "fft_default", Title: "FFT backend", Value: string(spectral.DefaultBackend())},
				{Key: "fft_backends", Title: "FFT backends compiled in", Value: backends},
			}
			if rev := vcsRevision(); rev != "" {
				fields = append(fields, report.Field{Key: "revision", Title: "revision", Value: rev})
			}
			return report.Write(cmd.OutOrStdout(), f, report.Doc{Fields: fields})
		},
	}
	out.Bind(cmd.Flags())
	return cmd
}

// vcsRevision returns the commit the binary was built from, if the Go
// toolchain recorded it.
func vcsRevision() string {
	info, ok := debug.ReadBuildInfo()
	if !ok {
		return ""
	}
	rev, dirty := "", false
	for _, s := range info.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.modified":
			dirty = s.Value == "true"
		}
	}
	if rev != "" && dirty {
		rev += " (modified)"
	}
	return rev
}
