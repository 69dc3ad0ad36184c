package stability_test

import (
	"fmt"

	"github.com/memix-sim/memix/flow"
	"github.com/memix-sim/memix/stability"
)

// Extensile, rod-like inclusions (σ₀c₀ < 0, β = 1) on a membrane over
// water on both sides, in reduced units: lengths in L_SD = η_m/(η₊+η₋),
// times in 1/D_r. The closed form gives the fastest-growing wavelength, the
// band of unstable wavelengths and the critical activity (model
// predictions of the linearised equations).
func ExampleActive() {
	p := stability.Active{
		Membrane: flow.Membrane{
			Viscosity: 1,
			Upper:     flow.Subphase{Kind: flow.Deep, Viscosity: 0.5},
			Lower:     flow.Subphase{Kind: flow.Deep, Viscosity: 0.5},
		},
		Stress: -40, Alignment: 1, RotDiff: 1, TransDiff: 0.1,
	}
	pk, _ := stability.Fastest(p.Rate, 1e-3, 1e3)
	fmt.Printf("fastest: k = %.4f, wavelength %.4f, rate %.4f\n", pk.K, pk.Wavelength, pk.Rate)
	bands, _ := stability.UnstableBands(p.Rate, 1e-3, 1e3)
	short, long := bands[0].Wavelengths()
	fmt.Printf("unstable wavelengths: %.4f to %.4f\n", short, long)
	c, _ := p.CriticalStress(1e-3, 1e3)
	fmt.Printf("critical σ₀c₀ = %.4f at k = %.4f\n", c.Stress, c.Peak.K)
	// Output:
	// fastest: k = 3.0493, wavelength 2.0605, rate 2.6006
	// unstable wavelengths: 0.9135 to 9.2455
	// critical σ₀c₀ = -25.8954 at k = 2.5576
}
