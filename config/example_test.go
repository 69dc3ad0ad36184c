package config_test

import (
	"fmt"

	"github.com/memix-sim/memix/config"
)

// A membrane 100 nm above a wall: parse, check, derive the scales and
// reduce to solver units.
func Example() {
	c, err := config.Parse([]byte(`
membrane: {viscosity: 1e-9 Pa*s*m}
subphase:
  lower: {kind: wall, depth: 100 nm}
grid: {n: 128, box: 10 um}
inclusions: {dipole: 20 kT, density: 100 um^-2}
`), "example.yaml")
	if err != nil {
		fmt.Println(err)
		return
	}
	s := c.Scales()
	fmt.Println("Saffman–Delbrück length:", s.SaffmanDelbruck)
	fmt.Println("screening length of the wall:", s.WallLower)
	r, _ := config.Reduce(c)
	fmt.Printf("reduced: η_m = %g, η = %.4g, H = %.4g, box %g×%g\n",
		r.Membrane.Viscosity, r.Membrane.Lower.Viscosity, r.Membrane.Lower.Depth, r.Grid.Lx, r.Grid.Ly)
	fmt.Println("time unit (active time η_m/|σ₀c₀|):", r.Units.Time)

	_, err = c.Set("membrane.viscosity", "0.89 mPa*s")
	fmt.Println(err)
	// Output:
	// Saffman–Delbrück length: 561.8 nm
	// screening length of the wall: 335.2 nm
	// reduced: η_m = 1, η = 8.9, H = 0.01, box 1×1
	// time unit (active time η_m/|σ₀c₀|): 120.7 µs
	// membrane.viscosity = "0.89 mPa*s": wrong dimension: expected a surface viscosity, e.g. Pa*s*m or sP; got a viscosity (valid: > 0 Pa*s*m)
}
