package sim

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"time"

	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/fields"
	"github.com/memix-sim/memix/mixing"
	"github.com/memix-sim/memix/outputs"
	"github.com/memix-sim/memix/stability"
)

// Summary is summary.json: how a run ended and its main results, in SI
// units unless a name says otherwise. Values that do not exist (a
// threshold never reached, a fit without enough data) are null.
type Summary struct {
	Status  string `json:"status"` // finished, interrupted or failed
	Error   string `json:"error,omitempty"`
	Note    string `json:"note"`
	Version string `json:"program_version"`

	WallTimeS          float64  `json:"wall_time_s"` // of this invocation (a resumed run counts from the resume)
	Steps              int      `json:"steps"`       // steps since t = 0
	StepsThisCall      int      `json:"steps_this_call"`
	TimeS              float64  `json:"time_s"`
	EndTimeS           float64  `json:"end_time_s"`
	DtMinS             *float64 `json:"dt_min_s"` // smallest and largest step of this invocation
	DtMaxS             *float64 `json:"dt_max_s"`
	LastCheckpointStep *int     `json:"last_checkpoint_step"`
	FFTsPerStep        *float64 `json:"ffts_per_step"`

	Units struct {
		LengthM float64 `json:"length_m"` // ℓ₀
		TimeS   float64 `json:"time_s"`   // τ₀
	} `json:"units"`
	SaffmanDelbruckM *float64 `json:"saffman_delbruck_length_m"` // η_m/(η₊+η₋)

	Inclusions *InclusionSummary `json:"inclusions,omitempty"`
	// FlowSolver is the work of the iterative flow solve of this invocation
	// (composition-dependent viscosity only).
	FlowSolver *FlowSolverSummary `json:"flow_solver,omitempty"`
	Prediction *Prediction        `json:"prediction,omitempty"`

	// Final holds the last row of series.csv (column name → value, in the
	// column's reduced unit).
	Final map[string]float64 `json:"final"`
	// Mixing summarises each norm of series.csv (variance, hminus1,
	// hminushalf, mixnorm); absent without lipids.
	Mixing map[string]*NormSummary `json:"mixing,omitempty"`
	// DomainLengthM is L = 2π/⟨k⟩ at the start and at the end.
	DomainLengthM *struct {
		Initial, Final float64
	} `json:"domain_length_m,omitempty"`
}

// InclusionSummary records the inclusion parameters the run used.
type InclusionSummary struct {
	ActiveStressNPerM float64 `json:"active_stress_n_per_m"` // σ₀c₀, extensile < 0
	RotDiffusionPerS  float64 `json:"rot_diffusion_per_s"`
	RotDiffusionHow   string  `json:"rot_diffusion_how"`
	TransDiffusionM2S float64 `json:"trans_diffusion_m2_per_s"`
	TransDiffusionHow string  `json:"trans_diffusion_how"`
}

// FlowSolverSummary is the work of the preconditioned conjugate-gradient
// flow solve.
type FlowSolverSummary struct {
	Solves            int     `json:"solves"`
	MeanIterations    float64 `json:"mean_iterations"`
	MaxIterations     int     `json:"max_iterations"`
	MaxResidual       float64 `json:"max_relative_residual"`
	Tolerance         float64 `json:"tolerance"`
	ViscosityContrast float64 `json:"viscosity_contrast"` // η₊/η₋ or its inverse, ≥ 1
}

// Prediction is the linear stability of the uniform isotropic state for the
// run's parameters (MODEL.md §2.3), a model prediction.
type Prediction struct {
	Text                string   `json:"text"`
	Method              string   `json:"method"`
	FastestWavelengthM  *float64 `json:"fastest_wavelength_m"`
	GrowthRatePerS      *float64 `json:"growth_rate_per_s"`
	Unstable            bool     `json:"unstable"`
	BoxUnstableModes    int      `json:"box_unstable_modes"`
	BoxFastestRatePerS  *float64 `json:"box_fastest_rate_per_s"`
	BoxFastestWaveIndex [2]int   `json:"box_fastest_mode"`
}

// NormSummary is one mixing norm over the run.
type NormSummary struct {
	Initial float64 `json:"initial"`
	Final   float64 `json:"final"`
	Ratio   float64 `json:"ratio"` // final/initial
	// DecayRatePerS is λ of the exponential fit v ≈ A e^{−λt} over the
	// window [FitStartS, FitEndS] (chosen by mixing.Window's rule).
	DecayRatePerS *float64 `json:"decay_rate_per_s"`
	FitStartS     *float64 `json:"fit_start_s"`
	FitEndS       *float64 `json:"fit_end_s"`
	// PowerExponent is α of the power-law fit v ≈ C t^α (automatic window).
	PowerExponent *float64 `json:"power_exponent"`
	// ThresholdTimeS is when the norm first fell to output.threshold of its
	// initial value.
	ThresholdTimeS *float64 `json:"threshold_time_s"`
}

// MarshalJSON writes Initial, Final and Ratio as null when they are not
// finite (a diverging run's norms can overflow), which JSON cannot hold:
// otherwise summary.json of such a run could not be written at all.
func (n NormSummary) MarshalJSON() ([]byte, error) {
	type plain NormSummary // without this method
	return json.Marshal(struct {
		Initial *float64 `json:"initial"`
		Final   *float64 `json:"final"`
		Ratio   *float64 `json:"ratio"`
		plain
	}{finitePtr(n.Initial), finitePtr(n.Final), finitePtr(n.Ratio), plain(n)})
}

func ptr[T any](v T) *T { return &v }

// finitePtr returns nil for NaN and infinities, which JSON cannot hold.
func finitePtr(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

// summarise builds the summary of the run from its result and series.csv.
func (j *job) summarise(res Result, runErr error) *Summary {
	u := j.red.Units
	s := &Summary{
		Status:        string(res.Reason),
		Note:          "memix results are model predictions of a continuum model, not measurements.",
		Version:       j.opt.Version,
		WallTimeS:     time.Since(j.started).Seconds(),
		Steps:         j.model.Steps(),
		StepsThisCall: res.Steps,
		TimeS:         j.model.Time() * float64(u.Time),
		EndTimeS:      float64(j.cfg.EndTime()),
	}
	if runErr != nil && !errors.Is(runErr, ErrInterrupted) {
		s.Status = string(Failed)
		s.Error = runErr.Error()
	}
	if res.Steps > 0 {
		s.DtMinS, s.DtMaxS = ptr(res.MinDt*float64(u.Time)), ptr(res.MaxDt*float64(u.Time))
		s.FFTsPerStep = ptr(float64(j.ffts) / float64(j.model.Steps()))
	}
	if j.ckStep >= 0 {
		s.LastCheckpointStep = ptr(j.ckStep)
	}
	s.Units.LengthM, s.Units.TimeS = float64(u.Length), float64(u.Time)
	s.SaffmanDelbruckM = finitePtr(j.red.MembraneSI.SaffmanDelbruck())
	if j.params.Inclusions.Model != fields.NoInclusions {
		in := j.params.Inclusions
		s.Inclusions = &InclusionSummary{
			ActiveStressNPerM: float64(j.cfg.ActiveStress()),
			RotDiffusionPerS:  in.RotDiffusion / float64(u.Time),
			RotDiffusionHow:   j.diffHow[0],
			TransDiffusionM2S: in.TransDiffusion * float64(u.Length*u.Length) / float64(u.Time),
			TransDiffusionHow: j.diffHow[1],
		}
	}
	if j.params.VariableViscosity() {
		w := j.flowRun
		s.FlowSolver = &FlowSolverSummary{Solves: w.solves, MeanIterations: w.mean(), MaxIterations: w.maxIterations,
			MaxResidual: w.maxResidual, Tolerance: j.params.Solver.Tolerance, ViscosityContrast: j.params.Viscosity.Contrast()}
	}
	if p, ok := j.prediction(); ok {
		s.Prediction = p
	}
	j.seriesSummary(s)
	return s
}

// seriesSummary fills Final, Mixing and DomainLengthM from series.csv.
func (j *job) seriesSummary(s *Summary) {
	cols, rows, err := outputs.ReadSeries(filepath.Join(j.dir, SeriesFile))
	if err != nil || len(rows) == 0 {
		return
	}
	col := map[string]int{}
	for i, c := range cols {
		col[c.Name] = i
	}
	last := rows[len(rows)-1]
	s.Final = map[string]float64{}
	for i, c := range cols {
		if v := last[i]; !math.IsNaN(v) && !math.IsInf(v, 0) {
			s.Final[c.Name] = v
		}
	}
	if j.iPhi < 0 {
		return
	}
	t := column(rows, col["time_si"])
	s.Mixing = map[string]*NormSummary{}
	for n := range mixing.NumNorms {
		v := column(rows, col[normColumns[n].Name])
		ns := &NormSummary{Initial: v[0], Final: v[len(v)-1]}
		ns.Ratio = ns.Final / ns.Initial
		if fit, err := mixing.FitExp(t, v, mixing.Window{}); err == nil {
			ns.DecayRatePerS = finitePtr(fit.Rate)
			ns.FitStartS, ns.FitEndS = finitePtr(fit.Start), finitePtr(fit.End)
		}
		if fit, err := mixing.FitPower(t, v, mixing.Window{}); err == nil {
			ns.PowerExponent = finitePtr(fit.Exponent)
		}
		if v[0] > 0 {
			if tc, ok := mixing.Reach(t, v, j.cfg.Output.Threshold*v[0]); ok {
				ns.ThresholdTimeS = ptr(tc)
			}
		}
		s.Mixing[normColumns[n].Name] = ns
	}
	if i, ok := col["domain_length"]; ok {
		l := float64(j.red.Units.Length)
		s.DomainLengthM = &struct{ Initial, Final float64 }{rows[0][i] * l, last[i] * l}
		if finitePtr(s.DomainLengthM.Initial) == nil || finitePtr(s.DomainLengthM.Final) == nil {
			s.DomainLengthM = nil
		}
	}
}

func column(rows [][]float64, i int) []float64 {
	c := make([]float64, len(rows))
	for r, row := range rows {
		c[r] = row[i]
	}
	return c
}

// prediction evaluates the linear stability of the uniform isotropic state
// in SI units: the closed form s_act(k) for V₀ = 0 (MODEL.md §2.3). Runs
// with self-propulsion are referred to memix stability, whose kinetic
// operator takes longer.
func (j *job) prediction() (*Prediction, bool) {
	if j.params.Inclusions.Model == fields.NoInclusions || !j.cfg.Inclusions.Active() {
		return nil, false
	}
	if j.cfg.Inclusions.Speed > 0 {
		return &Prediction{Method: "none", Text: "self-propelled inclusions: see memix stability for the kinetic growth rates"}, true
	}
	act, _, _, err := j.cfg.Stability()
	if err != nil {
		return nil, false
	}
	lx, ly := j.cfg.Grid.Lengths()
	l0 := float64(j.red.Units.Length)
	kxm, kym := j.red.Grid.KMaxDealiased()
	kMax := math.Min(kxm, kym) / l0
	kMin := 2 * math.Pi / math.Max(float64(lx), float64(ly)) / 100
	p := &Prediction{Method: "closed form s_act(k) (MODEL.md §2.3)"}
	if j.params.VariableViscosity() {
		p.Method += ", evaluated at the uniform viscosity membrane.viscosity (the composition-dependent viscosity is not in the linear theory)"
	}
	peak, err := stability.Fastest(act.Rate, kMin, kMax*10)
	if err != nil {
		return nil, false
	}
	p.FastestWavelengthM, p.GrowthRatePerS = finitePtr(peak.Wavelength), finitePtr(peak.Rate)
	p.Unstable = peak.Rate > 0
	if modes, err := stability.BoxModes(act.Rate, float64(lx), float64(ly), kMax); err == nil && len(modes) > 0 {
		for _, m := range modes {
			if m.Rate > 0 {
				p.BoxUnstableModes++
			}
		}
		p.BoxFastestRatePerS = finitePtr(modes[0].Rate)
		p.BoxFastestWaveIndex = [2]int{modes[0].Nx, modes[0].Ny}
	}
	switch {
	case !p.Unstable:
		p.Text = fmt.Sprintf("the uniform isotropic state is stable: the largest growth rate is %.3g /s", peak.Rate)
	case peak.AtBound:
		p.Text = fmt.Sprintf("unstable; the growth rate still rises towards the longest wavelengths (%.3g /s at %s); %d box modes grow",
			peak.Rate, config.Length(peak.Wavelength), p.BoxUnstableModes)
	default:
		p.Text = fmt.Sprintf("unstable; fastest wavelength %s grows at %.3g /s (e-folding time %s); %d box modes grow",
			config.Length(peak.Wavelength), peak.Rate, config.Time(1/peak.Rate), p.BoxUnstableModes)
	}
	return p, true
}
