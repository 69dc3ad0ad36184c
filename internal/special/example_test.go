package special_test

import (
	"fmt"

	"github.com/memix-sim/memix/internal/special"
)

// The ratio K₁(ε)/K₀(ε) enters the drag of a disk in a membrane with
// substrate friction (Evans & Sackmann, J. Fluid Mech. 194, 553 (1988)).
func ExampleK1() {
	for _, eps := range []float64{0.1, 1, 10} {
		fmt.Printf("ε = %4.1f  K1/K0 = %.6f\n", eps, special.K1(eps)/special.K0(eps))
	}
	// Output:
	// ε =  0.1  K1/K0 = 4.059977
	// ε =  1.0  K1/K0 = 1.429625
	// ε = 10.0  K1/K0 = 1.048859
}
