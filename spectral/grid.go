package spectral

import (
	"fmt"
	"math"
)

// Grid is a periodic rectangular grid with its wavenumbers. The zero value
// is not usable; build one with NewGrid. A Grid is read-only after
// construction and may be shared between goroutines.
type Grid struct {
	Nx, Ny int     // points along x and y, both even and ≥ 4
	Lx, Ly float64 // box lengths, > 0

	nkx    int       // Nx/2 + 1, the stored kx columns
	kx     []float64 // kx[i] = 2π i/Lx, i < nkx
	ky     []float64 // ky[j] = 2π m(j)/Ly, j < Ny
	k2     []float64 // k2[j*nkx+i] = kx[i]² + ky[j]²
	weight []float64 // weight[i]: 1 for i = 0 and i = Nx/2, 2 otherwise
	keep   []bool    // keep[j*nkx+i]: false where the 2/3 rule zeroes the mode
	kxMax  int       // largest |nx| kept by the 2/3 rule
	kyMax  int       // largest |ny| kept by the 2/3 rule
}

// NewGrid returns the grid of nx × ny points on the box lx × ly. It returns
// an error, naming the offending value and the valid range, if a size is odd
// or smaller than 4 or a length is not finite and positive.
func NewGrid(nx, ny int, lx, ly float64) (*Grid, error) {
	for _, c := range []struct {
		name string
		n    int
	}{{"nx", nx}, {"ny", ny}} {
		if c.n < 4 || c.n%2 != 0 {
			return nil, fmt.Errorf("spectral: grid %s = %d: must be even and at least 4", c.name, c.n)
		}
	}
	for _, c := range []struct {
		name string
		l    float64
	}{{"lx", lx}, {"ly", ly}} {
		if !(c.l > 0) || math.IsInf(c.l, 0) {
			return nil, fmt.Errorf("spectral: box %s = %g: must be finite and > 0", c.name, c.l)
		}
	}
	g := &Grid{Nx: nx, Ny: ny, Lx: lx, Ly: ly, nkx: nx/2 + 1}
	g.kx = make([]float64, g.nkx)
	for i := range g.kx {
		g.kx[i] = 2 * math.Pi * float64(i) / lx
	}
	g.ky = make([]float64, ny)
	for j := range g.ky {
		g.ky[j] = 2 * math.Pi * float64(g.ModeY(j)) / ly
	}
	g.weight = make([]float64, g.nkx)
	for i := range g.weight {
		g.weight[i] = 2
	}
	g.weight[0], g.weight[nx/2] = 1, 1

	// Orszag's 2/3 rule: products of modes |n| ≤ K alias onto |n| ≤ K only
	// when 3K < N, so K = (N−1)/3 [Orszag, J. Atmos. Sci. 28, 1074 (1971)].
	g.kxMax, g.kyMax = (nx-1)/3, (ny-1)/3
	g.k2 = make([]float64, ny*g.nkx)
	g.keep = make([]bool, ny*g.nkx)
	for j := 0; j < ny; j++ {
		my := g.ModeY(j)
		for i := 0; i < g.nkx; i++ {
			idx := j*g.nkx + i
			g.k2[idx] = g.kx[i]*g.kx[i] + g.ky[j]*g.ky[j]
			g.keep[idx] = i <= g.kxMax && my <= g.kyMax && my >= -g.kyMax
		}
	}
	return g, nil
}

// String describes the grid for messages and logs.
func (g *Grid) String() string {
	return fmt.Sprintf("%d×%d points on %g×%g", g.Nx, g.Ny, g.Lx, g.Ly)
}

// Same reports whether g and h describe the same grid.
func (g *Grid) Same(h *Grid) bool {
	return g == h || (g.Nx == h.Nx && g.Ny == h.Ny && g.Lx == h.Lx && g.Ly == h.Ly)
}

// RealLen returns Nx·Ny, the length of a real field.
func (g *Grid) RealLen() int { return g.Nx * g.Ny }

// Nkx returns Nx/2 + 1, the number of stored kx columns.
func (g *Grid) Nkx() int { return g.nkx }

// SpecLen returns Ny·(Nx/2+1), the length of a spectral field.
func (g *Grid) SpecLen() int { return g.Ny * g.nkx }

// NewReal returns a zeroed real field.
func (g *Grid) NewReal() []float64 { return make([]float64, g.RealLen()) }

// NewSpectral returns a zeroed spectral field.
func (g *Grid) NewSpectral() []complex128 { return make([]complex128, g.SpecLen()) }

// X returns the x coordinate of column i; Y the y coordinate of row j.
func (g *Grid) X(i int) float64 { return float64(i) * g.Lx / float64(g.Nx) }

// Y returns the y coordinate of row j.
func (g *Grid) Y(j int) float64 { return float64(j) * g.Ly / float64(g.Ny) }

// ModeY returns the signed mode number m(j) of spectral row j: j for
// j ≤ Ny/2, j − Ny otherwise.
func (g *Grid) ModeY(j int) int {
	if j <= g.Ny/2 {
		return j
	}
	return j - g.Ny
}

// RowOfModeY returns the spectral row holding signed mode number m,
// −Ny/2 < m ≤ Ny/2. It panics outside that range.
func (g *Grid) RowOfModeY(m int) int {
	if m <= -g.Ny/2 || m > g.Ny/2 {
		panic(fmt.Sprintf("spectral: y mode %d outside (−%d, %d]", m, g.Ny/2, g.Ny/2))
	}
	if m < 0 {
		return m + g.Ny
	}
	return m
}

// Kx returns the kx of each stored column (length Nx/2+1). The slice is
// shared and must not be modified.
func (g *Grid) Kx() []float64 { return g.kx }

// Ky returns the ky of each row (length Ny). The slice is shared and must
// not be modified.
func (g *Grid) Ky() []float64 { return g.ky }

// K2 returns |k|² of each spectral index (length Ny·(Nx/2+1)). The slice is
// shared and must not be modified.
func (g *Grid) K2() []float64 { return g.k2 }

// Weight returns the multiplicity of stored column i in the full spectrum:
// 1 for i = 0 and i = Nx/2, whose conjugates are stored themselves, and 2
// for the other columns, whose conjugates are not stored.
func (g *Grid) Weight(i int) float64 { return g.weight[i] }

// Kept reports whether the 2/3 rule keeps spectral index idx.
func (g *Grid) Kept(idx int) bool { return g.keep[idx] }

// DealiasLimits returns the largest |nx| and |ny| kept by the 2/3 rule.
func (g *Grid) DealiasLimits() (kxMax, kyMax int) { return g.kxMax, g.kyMax }

// MinSpacing returns min(Lx/Nx, Ly/Ny).
func (g *Grid) MinSpacing() float64 {
	return math.Min(g.Lx/float64(g.Nx), g.Ly/float64(g.Ny))
}

// KMaxDealiased returns the largest |kx| and |ky| kept by the 2/3 rule.
func (g *Grid) KMaxDealiased() (kx, ky float64) {
	return 2 * math.Pi * float64(g.kxMax) / g.Lx, 2 * math.Pi * float64(g.kyMax) / g.Ly
}

func (g *Grid) checkReal(f []float64, name string) {
	if len(f) != g.RealLen() {
		panic(fmt.Sprintf("spectral: %s has length %d, want %d for grid %v", name, len(f), g.RealLen(), g))
	}
}

func (g *Grid) checkSpec(f []complex128, name string) {
	if len(f) != g.SpecLen() {
		panic(fmt.Sprintf("spectral: %s has length %d, want %d for grid %v", name, len(f), g.SpecLen(), g))
	}
}
