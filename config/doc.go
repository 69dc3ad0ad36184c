// Package config reads, checks and reduces the configuration of memix.
// It is the only package that sees physical units: it parses quantities
// with their units, validates every key, and turns the SI configuration
// into the dimensionless values the solvers use. Everything downstream is
// a documented reduced float64.
//
// # Quantities
//
// A value is a number with an optional unit expression: "200 nm",
// "0.89 mPa*s", "1e-9 Pa*s*m", "500 um^-2", "1 um^2/s", "2.5e3 Pa*s/m",
// "40 kT", "1/s", "5 µm". A bare number is in SI base units. Grammar:
//
//	quantity = number [unit]
//	unit     = [product] { "/" factor }
//	product  = factor { ("*" | "·" | "⋅" | space) factor }
//	factor   = atom [ "^" ["+"|"-"] digits | superscript digits ]
//	atom     = name | "(" unit ")"
//	name     = [SI prefix] unit name
//
// A product after a division ("kg/m*s") is ambiguous and rejected. Units:
// m, g, s, K, min, h, Hz, N, Pa, J, W, P, sP, dyn, erg, eV, Å, kT (also
// kBT, k_BT), rad, deg, %; prefixes y … Y, micro as u, µ (U+00B5) or μ
// (U+03BC). Dimensions are integer exponents of m, kg, s and K (see Dim).
// Decimal factors of the number, the prefixes and the units are added as
// exponents and the value is rounded once, so "0.89 mPa*s" is exactly the
// float64 nearest 0.00089.
//
// Conversions: the poise is the CGS unit of viscosity, 1 P = 1 g/(cm·s) =
// 0.1 Pa·s (its definition in CGS units; it is listed among the non-SI
// units in the BIPM SI brochure, 8th edition (2006), Table 9, from
// memory). The surface poise is a poise times a centimetre: 1 sP =
// 1 g/s = 1e-3 kg/s = 1e-3 Pa·s·m, since Pa·s·m = kg/s; MODEL.md §6
// quotes the same 1 sP = 1e-3 Pa·s·m, and the tests check that "1 sP",
// "1 g/s", "1 P*cm" and "1 dyn*s/cm" agree. kT is k_B·T at the configured
// temperature with k_B = 1.380649e-23 J/K, exact in the SI since 2019.
//
// # The schema
//
// The struct tags of Config and its section types are the single source
// of truth for every key: name, default, unit (from the field's Go type),
// valid range, allowed words, documentation. From them come the defaults
// (Default), decoding and unit checking (Load, Parse, Set), range checks
// (Validate), unknown-key detection with the closest known key suggested,
// the environment overrides (MEMIX_ + the key in upper case with dots as
// underscores), the resolved YAML (Config.WriteResolved) and the Markdown
// reference docs/config.md (WriteReference, kept in step by a golden test).
//
// How to add a key: add one field to a section struct in config.go, e.g.
//
//	Radius Length `key:"radius" default:"2 nm" range:"(0,inf)" doc:"Inclusion radius a (proteins: 1–5 nm, from memory)."`
//
// and regenerate the reference with
//
//	go test ./config -run TestReference -update
//
// The Go type sets the dimension: use a named quantity type (Length,
// Viscosity, SurfaceViscosity, Friction, Time, Rate, Energy, Diffusivity,
// AreaDensity, …; add one in quantities.go with its Dimension, SI and
// String methods if a new dimension is needed), float64 for a
// dimensionless number, int, bool, or string with enum:"a|b|c". A key
// without a fixed default is an Optional[T] with a fallback tag saying
// what applies instead; derive its value in Config.Resolved if it comes
// from other keys. Energies such as "40 kT" follow the temperature.
//
// How to add a section: define a struct of keys, add a field of that type
// with key and doc tags to Config (or to another section), and, if some
// rule spans several keys, give the struct a method
//
//	func (s MySection) check(at string, root *Config, report func(*FieldError))
//
// which reports each violation as a FieldError keyed by at + "." + name.
//
// # Errors
//
// Bad input never panics. Load and Validate return every problem at once,
// joined with errors.Join; each is a *FieldError with the key, the value as
// given, the SI unit and the valid range, wrapping a sentinel (ErrSyntax,
// ErrUnit, ErrDimension, ErrRange, ErrUnknownKey, ErrConflict,
// ErrMissing, ErrFile; ErrResolution for ResolutionWarnings). Problems
// lists them. A malformed schema tag is a programmer error and panics on
// first use (TestSchema catches it).
//
// # Reduced units
//
// The solvers work in reduced units (see Units and Reduce):
//
//   - length unit ℓ₀ = units.length, by default the box length grid.lx;
//   - surface viscosity unit η₀ = membrane.viscosity, so the reduced η_m
//     is exactly 1;
//   - time unit τ₀ = units.time, by default ℓ₀²·η₀/(k_B·T), which makes
//     the reduced energy unit η₀ℓ₀²/τ₀ equal to k_B·T (reduced kT = 1);
//   - temperature unit T₀ = temperature;
//   - mass unit M₀ = η₀·τ₀, which follows.
//
// A quantity of dimension m^a·kg^b·s^c·K^d is divided by
// ℓ₀^a·M₀^b·τ₀^c·T₀^d. So a bulk viscosity η becomes η·ℓ₀/η₀ (its
// reduced value is ℓ₀ over the one-sided Saffman–Delbrück length), a
// friction ξ becomes ξ·ℓ₀²/η₀, a depth H/ℓ₀, a rate γ·τ₀, and an energy
// E/(η₀ℓ₀²/τ₀). Reduce returns the membrane in SI and in reduced units, a
// spectral.Grid whose box is lx/ℓ₀ × ly/ℓ₀, and the derived scales.
//
// # Derived scales
//
// Config.Scales reports the Saffman–Delbrück length η_m/(η₊+η₋) with both
// subphase viscosities summed (some papers use one side only), the
// screening length sqrt(η_m·H/η) of each wall side, the combined screening
// length 1/sqrt(D(0)/η_m), and the friction length sqrt(η_m/ξ), with
// advice comparing the grid spacing with the smallest and the box with the
// largest of them. The lengths are model predictions, not measurements.
package config
