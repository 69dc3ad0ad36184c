package flow

import (
	"fmt"
	"testing"
)

// BenchmarkInclusionMobility times one call: closed forms only (friction,
// no subphase), and the numerical solution (translation and rotation) over
// a wall and a deep subphase for several basis sizes.
func BenchmarkInclusionMobility(b *testing.B) {
	b.Run("closed", func(b *testing.B) {
		m := Membrane{Viscosity: 1, Friction: 2}
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			if _, err := InclusionMobility(m, 1, 1); err != nil {
				b.Fatal(err)
			}
		}
	})
	m := Membrane{Viscosity: 1,
		Upper: Subphase{Kind: Deep, Viscosity: 1},
		Lower: Subphase{Kind: Wall, Viscosity: 1, Depth: 0.5}}
	for _, n := range []int{4, DefaultMobilityBasis, 12} {
		b.Run(fmt.Sprintf("numerical/n=%d", n), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := InclusionMobility(m, 1, 1, WithBasisSize(n)); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
