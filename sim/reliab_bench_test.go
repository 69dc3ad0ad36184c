package sim

import (
	"testing"

	"github.com/memix-sim/memix/config"
)

// BenchmarkGuardedStep compares a bare ETDRK4 step with the step of memix
// run, which also copies the state before the step (to undo and locate a
// blow-up) and checks every coefficient for a non-finite value after it.
// The guard is O(N) against the O(N log N) transforms of a step; quote
// the ratio of the two from one run.
func BenchmarkGuardedStep(b *testing.B) {
	for _, n := range []string{"64", "128"} {
		c, err := parseB(smallRun, "grid.n="+n, "output.snapshots=0")
		if err != nil {
			b.Fatal(err)
		}
		b.Run("n="+n+"/guard-only", func(b *testing.B) {
			j, err := newJob(c, b.TempDir(), opts())
			if err != nil {
				b.Fatal(err)
			}
			defer j.close()
			b.ReportAllocs()
			b.ResetTimer()
			ok := true
			for range b.N {
				for f := range j.prev {
					copy(j.prev[f], j.model.Spectral(f))
				}
				for f := range j.prev {
					ok = ok && finite(j.model.Spectral(f))
				}
			}
			if !ok {
				b.Fatal("not finite")
			}
		})
		for _, guarded := range []bool{false, true} {
			name := "n=" + n + "/bare"
			if guarded {
				name = "n=" + n + "/guarded"
			}
			b.Run(name, func(b *testing.B) {
				o := opts()
				j, err := newJob(c, b.TempDir(), o)
				if err != nil {
					b.Fatal(err)
				}
				defer j.close()
				if err := j.initialState(); err != nil {
					b.Fatal(err)
				}
				sys := system{j}
				b.ReportAllocs()
				b.ResetTimer()
				for range b.N {
					if guarded {
						err = sys.Step()
					} else {
						_, err = j.stepper.Step()
					}
					if err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}

func parseB(yaml string, set ...string) (config.Config, error) {
	c, err := config.Parse([]byte(yaml), "bench.yaml")
	if err != nil {
		return c, err
	}
	return applySet(c, set, false)
}
