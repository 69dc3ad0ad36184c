package mixing

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat"
)

// Ratios sets dst[i] = v[i]/v[0], the ratio of every value of a series to
// its initial value. dst may be v. It returns an error if v[0] is zero or
// not finite, and panics if the lengths differ or v is empty.
func Ratios(dst, v []float64) error {
	if len(dst) != len(v) || len(v) == 0 {
		panic(fmt.Sprintf("mixing: Ratios lengths %d and %d, want equal and > 0", len(dst), len(v)))
	}
	v0 := v[0]
	if v0 == 0 || math.IsNaN(v0) || math.IsInf(v0, 0) {
		return fmt.Errorf("mixing: initial value v[0] = %g: must be finite and nonzero to form ratios", v0)
	}
	for i, x := range v {
		dst[i] = x / v0
	}
	return nil
}

// Window selects the samples a fit uses: those with Start ≤ t ≤ End. The
// zero value asks for the automatic rule:
//
//  1. The usable samples run from the first one (for a power law, the first
//     with t > 0) up to, not including, the first that is not finite, not
//     positive, or below Floor times the largest value seen so far. Below
//     that level a decaying norm is dominated by round-off (a norm computed
//     from FFT coefficients of a 1024² field carries a relative round-off
//     of order ε·1024 ≈ 2×10⁻¹³), whose logarithm would spoil the fit.
//  2. Let x be the fit abscissa (t for an exponential, ln t for a power
//     law) and x₀, x₁ its first and last usable values. The candidates are
//     the tails that start at x₀ + (c/8)(x₁ − x₀), c = 0, 1, 2, 3, 4, and
//     run to the last usable sample: every candidate covers at least the
//     last half of the usable span, and early transients can be skipped.
//  3. The candidate with at least 3 samples whose least-squares line has the
//     smallest residual standard deviation, sqrt(Σr²/(n − 2)) of ln v, wins;
//     on a tie the longer tail wins.
//
// The chosen window is reported in the fit result.
type Window struct {
	Start, End float64
}

// Floor is the relative level below which the automatic window stops
// (rule 1 of Window).
const Floor = 1e-10

// FitWindow describes the samples a fit used.
type FitWindow struct {
	From, To   int     // the fit used samples From … To−1
	Start, End float64 // their first and last times
	Auto       bool    // whether the automatic rule chose them
	Residual   float64 // residual standard deviation of ln v about the line
}

// ExpFit is v ≈ Amplitude·exp(−Rate·t): Rate > 0 for a decay.
type ExpFit struct {
	Rate, Amplitude float64
	FitWindow
}

// PowerFit is v ≈ Prefactor·t^Exponent: Exponent < 0 for a decay, > 0 for
// growth (a coarsening length, say).
type PowerFit struct {
	Exponent, Prefactor float64
	FitWindow
}

// FitExp fits v ≈ A e^{−λt} by least squares on ln v over the window w (the
// zero Window chooses one automatically; see Window). t must be strictly
// increasing. It returns an error naming the index and value of bad data
// (a non-positive or non-finite v inside a given window, t not increasing)
// or if fewer than 3 samples remain; it panics if the lengths differ. It
// allocates the scratch it needs.
func FitExp(t, v []float64, w Window) (ExpFit, error) {
	fw, slope, icept, err := fitLog(t, v, w, false)
	if err != nil {
		return ExpFit{}, err
	}
	return ExpFit{Rate: -slope, Amplitude: math.Exp(icept), FitWindow: fw}, nil
}

// FitPower fits v ≈ C t^α by least squares on (ln t, ln v) over the window
// w (the zero Window chooses one automatically; see Window). Samples with
// t ≤ 0 are skipped by the automatic rule and are an error inside a given
// window. Errors and panics are as for FitExp.
func FitPower(t, v []float64, w Window) (PowerFit, error) {
	fw, slope, icept, err := fitLog(t, v, w, true)
	if err != nil {
		return PowerFit{}, err
	}
	return PowerFit{Exponent: slope, Prefactor: math.Exp(icept), FitWindow: fw}, nil
}

// fitLog fits ln v = icept + slope·x with x = t, or x = ln t when logT.
func fitLog(t, v []float64, w Window, logT bool) (fw FitWindow, slope, icept float64, err error) {
	if len(t) != len(v) {
		panic(fmt.Sprintf("mixing: fit lengths %d (t) and %d (v) differ", len(t), len(v)))
	}
	for i := 1; i < len(t); i++ {
		if !(t[i] > t[i-1]) {
			return fw, 0, 0, fmt.Errorf("mixing: time t[%d] = %g after t[%d] = %g: times must increase strictly", i, t[i], i-1, t[i-1])
		}
	}
	kind := "exponential"
	if logT {
		kind = "power-law"
	}
	var from, to int
	auto := w == Window{}
	if auto {
		from, to = usable(t, v, logT)
	} else {
		if !(w.End > w.Start) {
			return fw, 0, 0, fmt.Errorf("mixing: fit window [%g, %g]: End must exceed Start", w.Start, w.End)
		}
		from, to = len(t), len(t)
		for i, ti := range t {
			if ti >= w.Start && from == len(t) {
				from = i
			}
			if ti <= w.End {
				to = i + 1
			}
		}
		for i := from; i < to; i++ {
			if !(v[i] > 0) || math.IsInf(v[i], 0) {
				return fw, 0, 0, fmt.Errorf("mixing: %s fit: value v[%d] = %g at t = %g inside the window [%g, %g]: must be finite and > 0", kind, i, v[i], t[i], w.Start, w.End)
			}
			if logT && !(t[i] > 0) {
				return fw, 0, 0, fmt.Errorf("mixing: power-law fit: time t[%d] = %g inside the window [%g, %g]: must be > 0", i, t[i], w.Start, w.End)
			}
		}
	}
	if to-from < 3 {
		return fw, 0, 0, fmt.Errorf("mixing: %s fit: %d usable samples (from index %d), need at least 3", kind, max(to-from, 0), from)
	}
	x := make([]float64, to-from)
	y := make([]float64, to-from)
	for i := range x {
		x[i], y[i] = t[from+i], math.Log(v[from+i])
		if logT {
			x[i] = math.Log(x[i])
		}
	}
	if !auto {
		icept, slope = stat.LinearRegression(x, y, nil, false)
		return FitWindow{From: from, To: to, Start: t[from], End: t[to-1], Residual: residual(x, y, icept, slope)}, slope, icept, nil
	}
	best := math.Inf(1)
	x0, x1 := x[0], x[len(x)-1]
	start := 0
	for c := 0; c <= 4; c++ {
		xc := x0 + float64(c)/8*(x1-x0)
		for start < len(x) && x[start] < xc {
			start++
		}
		if len(x)-start < 3 {
			break
		}
		a, b := stat.LinearRegression(x[start:], y[start:], nil, false)
		if r := residual(x[start:], y[start:], a, b); r < best {
			best = r
			icept, slope = a, b
			fw = FitWindow{From: from + start, To: to, Start: t[from+start], End: t[to-1], Auto: true, Residual: r}
		}
	}
	return fw, slope, icept, nil
}

// usable returns the index range of rule 1 of Window.
func usable(t, v []float64, logT bool) (from, to int) {
	for from < len(t) && logT && !(t[from] > 0) {
		from++
	}
	var peak float64
	for to = from; to < len(v); to++ {
		x := v[to]
		if !(x > 0) || math.IsInf(x, 0) || x < Floor*peak {
			break
		}
		peak = math.Max(peak, x)
	}
	return from, to
}

// residual returns sqrt(Σ(y − a − b x)²/(n − 2)).
func residual(x, y []float64, a, b float64) float64 {
	var ss float64
	for i := range x {
		r := y[i] - a - b*x[i]
		ss += r * r
	}
	return math.Sqrt(ss / float64(len(x)-2))
}

// Reach returns the first time at which the series v falls to level or
// below, interpolated between the two samples that bracket the crossing:
// linearly in ln v when both samples and level are positive (exact for an
// exponential decay), linearly in v otherwise. It returns t[0] if v[0] is
// already at or below level, and ok = false if the series never gets
// there. Non-finite values never count as a crossing. It panics if the
// lengths differ.
func Reach(t, v []float64, level float64) (tc float64, ok bool) {
	if len(t) != len(v) {
		panic(fmt.Sprintf("mixing: Reach lengths %d (t) and %d (v) differ", len(t), len(v)))
	}
	for i, x := range v {
		if !(x <= level) {
			continue
		}
		if i == 0 {
			return t[0], true
		}
		a := v[i-1]
		if math.IsNaN(a) || math.IsInf(a, 0) {
			return t[i], true // no finite left neighbour to interpolate from
		}
		var f float64
		if a > 0 && x > 0 && level > 0 {
			f = math.Log(a/level) / math.Log(a/x)
		} else {
			f = (a - level) / (a - x)
		}
		return t[i-1] + f*(t[i]-t[i-1]), true
	}
	return math.NaN(), false
}
