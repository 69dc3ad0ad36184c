package scan_test

import (
	"fmt"
	"log"

	"github.com/memix-sim/memix/scan"
)

// A sweep of a subphase's kind and depth: three depths, logarithmically
// spaced from 50 nm to 5 µm, for each of two kinds. The identifiers depend
// only on each point's values.
func ExampleParseSweep() {
	sweep := []byte(`
base: {subphase: {lower: {kind: deep, depth: 1 um}}}
axes:
  subphase.lower.kind: [deep, wall]
  subphase.lower.depth: {log: [50 nm, 5 um], n: 3}
`)
	s, err := scan.ParseSweep(sweep, ".", nil)
	if err != nil {
		log.Fatal(err)
	}
	pts, err := s.Points()
	if err != nil {
		log.Fatal(err)
	}
	for _, p := range pts {
		fmt.Println(p.Index, p.ID, p.Label())
	}
	fmt.Printf("%s", pts[5].Config)
	// Output:
	// 0 p-3d2b0c7d43 kind=deep, depth=50 nm
	// 1 p-680b593967 kind=deep, depth=500 nm
	// 2 p-4dd5ca8e56 kind=deep, depth=5000 nm
	// 3 p-e870cbba9f kind=wall, depth=50 nm
	// 4 p-6cec043a63 kind=wall, depth=500 nm
	// 5 p-68a8980d25 kind=wall, depth=5000 nm
	// subphase:
	//   lower:
	//     kind: wall
	//     depth: 5000 nm
}
