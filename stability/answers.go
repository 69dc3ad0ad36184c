package stability

import (
	"errors"
	"fmt"
	"math"
	"sort"
)

// ScanPoints is the number of log-spaced wavenumbers Fastest and
// UnstableBands evaluate before refining. Features of a growth-rate curve
// narrower than ln(kMax/kMin)/(ScanPoints−1) in ln k can be missed.
const ScanPoints = 256

// Peak is the fastest-growing wavenumber of a growth-rate curve on an
// interval.
type Peak struct {
	K          float64 // wavenumber of the largest rate
	Wavelength float64 // 2π/K
	Rate       float64 // growth rate at K (may be negative: then nothing grows)
	// AtBound reports a maximum at kMin or kMax: the rate still rises
	// beyond the interval (e.g. no subphase, where the longest wavelength
	// grows fastest).
	AtBound bool
}

func checkInterval(kMin, kMax float64) error {
	if !(kMin > 0) || !(kMax > kMin) || math.IsInf(kMax, 0) {
		return fmt.Errorf("stability: wavenumber interval [%g, %g] 1/length: need 0 < kMin < kMax < ∞", kMin, kMax)
	}
	return nil
}

// scan evaluates rate at ScanPoints log-spaced wavenumbers from kMin to
// kMax inclusive.
func scan(rate func(float64) float64, kMin, kMax float64) (ks, ss []float64, err error) {
	ks = make([]float64, ScanPoints)
	ss = make([]float64, ScanPoints)
	l0, l1 := math.Log(kMin), math.Log(kMax)
	for i := range ks {
		ks[i] = math.Exp(l0 + (l1-l0)*float64(i)/(ScanPoints-1))
		if i == 0 {
			ks[i] = kMin
		} else if i == ScanPoints-1 {
			ks[i] = kMax
		}
		ss[i] = rate(ks[i])
		if math.IsNaN(ss[i]) {
			return nil, nil, fmt.Errorf("stability: growth rate at k = %g is NaN", ks[i])
		}
	}
	return ks, ss, nil
}

// Fastest returns the wavenumber in [kMin, kMax] at which rate is largest:
// a scan at ScanPoints log-spaced wavenumbers, then golden-section search in
// ln k between the neighbours of the best scan point. Near a smooth maximum
// s(k) is flat to second order, so K is resolved to about
// sqrt(ε·|s|/|s″|)/K relative (≈ 10⁻⁸) and Rate to round-off. It returns
// an error for a bad interval or a NaN rate.
func Fastest(rate func(float64) float64, kMin, kMax float64) (Peak, error) {
	if err := checkInterval(kMin, kMax); err != nil {
		return Peak{}, err
	}
	ks, ss, err := scan(rate, kMin, kMax)
	if err != nil {
		return Peak{}, err
	}
	best := 0
	for i, s := range ss {
		if s > ss[best] {
			best = i
		}
	}
	if best == 0 || best == len(ks)-1 {
		return Peak{K: ks[best], Wavelength: 2 * math.Pi / ks[best], Rate: ss[best], AtBound: true}, nil
	}
	k, s := golden(rate, math.Log(ks[best-1]), math.Log(ks[best+1]), ks[best], ss[best])
	return Peak{K: k, Wavelength: 2 * math.Pi / k, Rate: s}, nil
}

// golden maximises rate(e^x) on [a, b] by golden-section search, starting
// from a known point (k0, s0) inside, and returns the best point evaluated.
// It stops when b − a < 10⁻¹⁰ (in ln k), below which round-off of a flat
// maximum makes further steps meaningless.
func golden(rate func(float64) float64, a, b, k0, s0 float64) (k, s float64) {
	const invPhi = 0.6180339887498949 // (√5 − 1)/2
	k, s = k0, s0
	f := func(x float64) float64 {
		kx := math.Exp(x)
		v := rate(kx)
		if v > s {
			k, s = kx, v
		}
		return v
	}
	c := b - invPhi*(b-a)
	d := a + invPhi*(b-a)
	fc, fd := f(c), f(d)
	for b-a > 1e-10 {
		if fc >= fd {
			b, d, fd = d, c, fc
			c = b - invPhi*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + invPhi*(b-a)
			fd = f(d)
		}
	}
	return k, s
}

// Band is an interval of wavenumbers with a positive growth rate.
type Band struct {
	KLo, KHi float64 // rate > 0 for KLo < k < KHi
	// LoOpen and HiOpen report that the band reaches kMin or kMax of the
	// search interval with the rate still positive there: the true band
	// extends beyond it.
	LoOpen, HiOpen bool
}

// Wavelengths returns the band's wavelengths 2π/KHi < 2π/KLo.
func (b Band) Wavelengths() (short, long float64) { return 2 * math.Pi / b.KHi, 2 * math.Pi / b.KLo }

// UnstableBands returns the bands of [kMin, kMax] where rate > 0, in
// increasing k: sign changes found by a scan at ScanPoints log-spaced
// wavenumbers are refined by bisection in ln k to round-off. A band
// narrower than the scan spacing can be missed. It returns an error for a
// bad interval or a NaN rate; no band gives an empty slice.
func UnstableBands(rate func(float64) float64, kMin, kMax float64) ([]Band, error) {
	if err := checkInterval(kMin, kMax); err != nil {
		return nil, err
	}
	ks, ss, err := scan(rate, kMin, kMax)
	if err != nil {
		return nil, err
	}
	var bands []Band
	var cur *Band
	if ss[0] > 0 {
		bands = append(bands, Band{KLo: kMin, LoOpen: true})
		cur = &bands[0]
	}
	for i := 1; i < len(ks); i++ {
		up, down := ss[i-1] <= 0 && ss[i] > 0, ss[i-1] > 0 && ss[i] <= 0
		if !up && !down {
			continue
		}
		root := bisectLog(rate, ks[i-1], ks[i], ss[i-1] > 0)
		if up {
			bands = append(bands, Band{KLo: root})
			cur = &bands[len(bands)-1]
		} else {
			cur.KHi = root
			cur = nil
		}
	}
	if cur != nil {
		cur.KHi, cur.HiOpen = kMax, true
	}
	return bands, nil
}

// bisectLog returns the sign change of rate between a and b (in ln k);
// posAtA says whether rate(a) > 0.
func bisectLog(rate func(float64) float64, a, b float64, posAtA bool) float64 {
	la, lb := math.Log(a), math.Log(b)
	for range 200 {
		m := (la + lb) / 2
		if m <= la || m >= lb {
			break
		}
		if (rate(math.Exp(m)) > 0) == posAtA {
			la = m
		} else {
			lb = m
		}
	}
	return math.Exp((la + lb) / 2)
}

// Critical is the threshold of the active instability.
type Critical struct {
	// Stress is the σ₀c₀ at which the largest growth rate over the
	// wavenumber interval crosses zero. It has the sign of −β.
	Stress float64
	// Peak is the fastest-growing mode at that stress: the first unstable
	// wavenumber, with Peak.Rate ≈ 0 (to the root tolerance).
	Peak Peak
}

// criticalStress finds the root in σ of F(σ) = max_k rate(σ, k) on the
// unstable side σ·β < 0. F is negative at σ = 0 (with no activity every
// mode of the flow-coupled sector decays) and rises with |σ|; the bracket
// is grown by doubling from twice the closed-form marginal stress of the
// geometric-mean wavenumber of the interval, and the root is polished by
// Brent's method to a relative width of 10⁻¹².
func criticalStress(rate func(stress, k float64) float64, p Active, kMin, kMax float64) (Critical, error) {
	if err := checkInterval(kMin, kMax); err != nil {
		return Critical{}, err
	}
	q := p
	q.Modes = 0
	if err := q.Validate(); err != nil {
		return Critical{}, err
	}
	if p.Alignment == 0 {
		return Critical{}, errors.New("stability: alignment β = 0: the flow does not rotate the inclusions, so no activity destabilises the isotropic state")
	}
	dir := -math.Copysign(1, p.Alignment)
	var failed error
	peakAt := func(mag float64) Peak {
		pk, err := Fastest(func(k float64) float64 { return rate(dir*mag, k) }, kMin, kMax)
		if err != nil && failed == nil {
			failed = err
		}
		return pk
	}
	km := math.Sqrt(kMin * kMax)
	hi := 2 * 4 * (4*p.RotDiff + p.TransDiff*km*km) * p.Membrane.D(km) / (math.Abs(p.Alignment) * km * km)
	lo, flo := 0.0, peakAt(0).Rate
	if failed != nil {
		return Critical{}, failed
	}
	if flo >= 0 {
		return Critical{}, fmt.Errorf("stability: growth rate %g ≥ 0 without activity: the operator is not the passive one", flo)
	}
	fhi := peakAt(hi).Rate
	for i := 0; fhi <= 0; i++ {
		if failed != nil {
			return Critical{}, failed
		}
		if i == 100 {
			return Critical{}, fmt.Errorf("stability: no instability in [%g, %g] up to |σ₀c₀| = %g", kMin, kMax, hi)
		}
		lo, flo = hi, fhi
		hi *= 2
		fhi = peakAt(hi).Rate
	}
	root := brent(func(m float64) float64 { return peakAt(m).Rate }, lo, hi, flo, fhi, 1e-12)
	pk := peakAt(root)
	if failed != nil {
		return Critical{}, failed
	}
	return Critical{Stress: dir * root, Peak: pk}, nil
}

// brent returns a zero of f in [a, b], where fa = f(a) and fb = f(b) have
// opposite signs, to a relative tolerance rtol: inverse quadratic
// interpolation safeguarded by bisection [Brent, Algorithms for
// Minimization without Derivatives, Prentice-Hall 1973, ch. 4].
func brent(f func(float64) float64, a, b, fa, fb, rtol float64) float64 {
	const eps = 0x1p-52
	c, fc := a, fa
	d := b - a
	e := d
	for range 200 {
		if (fb > 0) == (fc > 0) {
			c, fc = a, fa
			d = b - a
			e = d
		}
		if math.Abs(fc) < math.Abs(fb) {
			a, b, c = b, c, b
			fa, fb, fc = fb, fc, fb
		}
		tol1 := (2*eps + rtol/2) * math.Abs(b)
		xm := (c - b) / 2
		if math.Abs(xm) <= tol1 || fb == 0 {
			return b
		}
		if math.Abs(e) >= tol1 && math.Abs(fa) > math.Abs(fb) {
			s := fb / fa
			var p, q float64
			if a == c {
				p, q = 2*xm*s, 1-s
			} else {
				q = fa / fc
				r := fb / fc
				p = s * (2*xm*q*(q-r) - (b-a)*(r-1))
				q = (q - 1) * (r - 1) * (s - 1)
			}
			if p > 0 {
				q = -q
			} else {
				p = -p
			}
			if 2*p < math.Min(3*xm*q-math.Abs(tol1*q), math.Abs(e*q)) {
				e, d = d, p/q
			} else {
				d, e = xm, xm
			}
		} else {
			d, e = xm, xm
		}
		a, fa = b, fb
		if math.Abs(d) > tol1 {
			b += d
		} else {
			b += math.Copysign(tol1, xm)
		}
		fb = f(b)
	}
	return b
}

// BoxMode is one Fourier mode of a periodic box, k = 2π(Nx/Lx, Ny/Ly).
type BoxMode struct {
	Nx, Ny int
	K      float64 // |k|
	Rate   float64
}

// BoxModes returns every mode of the periodic box lx × ly with
// 0 < |k| ≤ kMax, one of each pair ±k (Nx > 0, or Nx = 0 and Ny > 0),
// sorted fastest first (ties by K, then Nx, then Ny). The unstable modes are
// the leading ones with Rate > 0; modes[0] is the box's fastest mode. The
// rate is evaluated once per distinct |k|. It returns an error for
// non-positive or non-finite lengths or kMax, or if kMax is below the
// smallest wavenumber of the box.
func BoxModes(rate func(float64) float64, lx, ly, kMax float64) ([]BoxMode, error) {
	for _, c := range []struct {
		name string
		v    float64
	}{{"box length Lx", lx}, {"box length Ly", ly}, {"largest wavenumber kMax", kMax}} {
		if !(c.v > 0) || math.IsInf(c.v, 0) {
			return nil, fmt.Errorf("stability: %s = %g: must be finite and > 0", c.name, c.v)
		}
	}
	nxMax := int(math.Floor(kMax * lx / (2 * math.Pi)))
	nyMax := int(math.Floor(kMax * ly / (2 * math.Pi)))
	if nxMax == 0 && nyMax == 0 {
		return nil, fmt.Errorf("stability: largest wavenumber kMax = %g is below the box's smallest, 2π/max(Lx, Ly) = %g", kMax, 2*math.Pi/math.Max(lx, ly))
	}
	cache := map[float64]float64{}
	var modes []BoxMode
	for nx := 0; nx <= nxMax; nx++ {
		for ny := -nyMax; ny <= nyMax; ny++ {
			if nx == 0 && ny <= 0 {
				continue
			}
			kx, ky := 2*math.Pi*float64(nx)/lx, 2*math.Pi*float64(ny)/ly
			k2 := kx*kx + ky*ky
			if k2 > kMax*kMax {
				continue
			}
			s, ok := cache[k2]
			if !ok {
				s = rate(math.Sqrt(k2))
				cache[k2] = s
			}
			modes = append(modes, BoxMode{Nx: nx, Ny: ny, K: math.Sqrt(k2), Rate: s})
		}
	}
	sort.Slice(modes, func(i, j int) bool {
		a, b := modes[i], modes[j]
		if a.Rate != b.Rate {
			return a.Rate > b.Rate
		}
		if a.K != b.K {
			return a.K < b.K
		}
		if a.Nx != b.Nx {
			return a.Nx < b.Nx
		}
		return a.Ny < b.Ny
	})
	return modes, nil
}
