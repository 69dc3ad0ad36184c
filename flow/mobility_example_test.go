package flow_test

import (
	"fmt"

	"github.com/memix-sim/memix/flow"
)

// A protein of radius 2 nm in a bilayer of surface viscosity 1e-10 Pa·s·m
// between two layers of water: one over a deep bath, one in a 100 nm gap
// above a glass wall. SI units throughout; the diffusivities are model
// predictions, not measurements.
func ExampleInclusionMobility() {
	m := flow.Membrane{
		Viscosity: 1e-10, // Pa·s·m
		Upper:     flow.Subphase{Kind: flow.Deep, Viscosity: 0.89e-3},
		Lower:     flow.Subphase{Kind: flow.Wall, Viscosity: 0.89e-3, Depth: 100e-9},
	}
	mob, err := flow.InclusionMobility(m, 2e-9, 4.14e-21) // radius m, k_BT J
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("ε = %.4f (%s)\n", mob.Epsilon, mob.EpsilonDef)
	fmt.Printf("D_T = %.3f µm²/s (%s)\n", mob.Translation.Diffusivity*1e12, mob.Translation.Method)
	fmt.Printf("D_R = %.4g rad²/µs (%s)\n", mob.Rotation.Diffusivity*1e-6, mob.Rotation.Method)
	// Output:
	// ε = 0.0356 (a(η₊+η₋)/η_m = a/L_SD (Saffman–Delbrück length, both subphases summed))
	// D_T = 10.849 µm²/s (numerical)
	// D_R = 0.8007 rad²/µs (numerical)
}
