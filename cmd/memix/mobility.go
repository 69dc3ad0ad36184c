package main

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/spf13/cobra"

	"github.com/memix-sim/memix/cmd/memix/internal/report"
	"github.com/memix-sim/memix/config"
	"github.com/memix-sim/memix/flow"
)

func init() { register(newMobilityCmd) }

// methodNames lists the names --method accepts, in the order of
// flow.MobilityMethod.
func methodNames() []string {
	var names []string
	for m := flow.MethodAuto; ; m++ {
		s := m.String()
		if strings.HasPrefix(s, "MobilityMethod(") {
			return names
		}
		names = append(names, s)
	}
}

// rotationalMethod reports whether m is a closed form for rotation only.
func rotationalMethod(m flow.MobilityMethod) bool {
	return m == flow.MethodMembraneRotation || m == flow.MethodBrinkmanRotation || m == flow.MethodThinDiskRotation
}

func newMobilityCmd(e *env) *cobra.Command {
	var out report.Flags
	var radiusText, methodText string
	cmd := &cobra.Command{
		Use:   "mobility CONFIG",
		Short: "Diffusivities and drags of a disk-shaped inclusion in the configured membrane",
		Long: `mobility computes the translational and rotational drag and diffusion coefficients of a
rigid disk of radius a (--radius, or inclusions.radius) in the configured membrane, subphases
and friction at the configured temperature: D_T = k_BT/λ_T and D_R = k_BT/λ_R, the reduced size
ε with its definition, and for each estimate the method used, its published source, its
validity range and its estimated relative error.

--method chooses the method: auto (a closed form where it is exact or its accuracy is
established, the numerical solution otherwise), numerical (a Galerkin solution of the
rigid-disk problem with the membrane's own D(k), for any subphases), or a closed form. A
translational closed form (saffman-delbruck, petrov-schwille, evans-sackmann,
evans-sackmann-exterior) sets the translation and leaves rotation on auto; a rotational one
(membrane-rotation, brinkman-rotation, thin-disk-rotation) the reverse. A closed form used
outside its assumptions is reported with an unknown error.

The values are model predictions, not measurements.`,
		Example: "  memix mobility examples/free-patch.yaml --radius 2nm\n  memix mobility examples/glass-gap.yaml --radius '0.004 um' --json\n  memix mobility examples/free-patch.yaml --method saffman-delbruck --csv",
		Args:    cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			f, err := out.Format()
			if err != nil {
				return usageError{err}
			}
			path := args[0]
			c, err := loadConfig(path)
			if err != nil {
				return err
			}
			kT := float64(c.KT())
			radius := float64(c.Inclusions.Radius)
			if cmd.Flags().Changed("radius") {
				if radius, err = parseQuantityFlag("radius", radiusText, config.DimLength, kT, true); err != nil {
					return err
				}
			}
			method, err := flow.ParseMobilityMethod(methodText)
			if err != nil {
				return flagError("method", methodText, "", strings.Join(methodNames(), ", "), errors.New("unknown mobility method"))
			}
			var opts []flow.MobilityOption
			switch {
			case method == flow.MethodAuto:
			case method == flow.MethodNumerical:
				opts = append(opts, flow.WithTranslationMethod(method), flow.WithRotationMethod(method))
			case rotationalMethod(method):
				opts = append(opts, flow.WithRotationMethod(method))
			default:
				opts = append(opts, flow.WithTranslationMethod(method))
			}
			mob, err := flow.InclusionMobility(c.FlowMembrane(), radius, kT, opts...)
			noDrag := errors.Is(err, flow.ErrNoFiniteDrag)
			if err != nil && !noDrag {
				if method != flow.MethodAuto && method != flow.MethodNumerical {
					return flagError("method", methodText, "", "a method whose parameters this membrane has", err)
				}
				return err
			}
			return report.Write(cmd.OutOrStdout(), f, mobilityDoc(path, c, mob, noDrag))
		},
	}
	out.Bind(cmd.Flags())
	cmd.Flags().StringVar(&radiusText, "radius", "", "inclusion radius with its unit, e.g. 2nm (default inclusions.radius)")
	cmd.Flags().StringVar(&methodText, "method", "auto", "method: "+strings.Join(methodNames(), ", "))
	return cmd
}

func membraneText(m flow.Membrane) string {
	side := func(s flow.Subphase) string {
		switch s.Kind {
		case flow.None:
			return "none"
		case flow.Deep:
			return "deep, " + human(s.Viscosity, config.DimViscosity)
		}
		return fmt.Sprintf("%s, %s, depth %s", s.Kind, human(s.Viscosity, config.DimViscosity), human(s.Depth, config.DimLength))
	}
	t := fmt.Sprintf("η_m = %s; upper: %s; lower: %s", config.FormatHuman(m.Viscosity, config.DimSurfViscosity), side(m.Upper), side(m.Lower))
	if m.Friction > 0 {
		t += "; friction ξ = " + human(m.Friction, config.DimFriction)
	}
	return t
}

func relErrCell(x float64) report.Cell {
	switch {
	case math.IsNaN(x):
		return report.Cell{Value: nil, Text: "unknown (outside its assumptions)"}
	case x == 0:
		return report.Cell{Value: 0.0, Text: "exact (round-off)"}
	}
	return report.Cell{Value: x, Text: report.FormatFloat(x)}
}

func mobilityDoc(path string, c config.Config, mob flow.Mobility, noDrag bool) report.Doc {
	kT := mob.KT
	m := c.FlowMembrane()
	fields := []report.Field{
		{Key: "config", Title: "configuration", Value: path},
		{Key: "membrane", Value: membraneText(m)},
		{Key: "temperature", Value: qcell(float64(c.Temperature), config.DimTemperature)},
		{Key: "kT", Title: "k_BT", Value: qcell(kT, config.DimEnergy)},
		{Key: "radius", Title: "radius a", Value: qcell(mob.Radius, config.DimLength)},
		{Key: "epsilon", Title: "ε", Value: mob.Epsilon},
		{Key: "epsilon_definition", Title: "ε is", Value: mob.EpsilonDef},
		{Key: "epsilon_sd", Title: "a/L_SD = a(η₊+η₋)/η_m", Value: mob.EpsilonSD},
		{Key: "epsilon_screen", Title: "a·sqrt(D(0)/η_m)", Value: mob.EpsilonScreen},
	}
	if l := m.SaffmanDelbruck(); !math.IsInf(l, 1) {
		fields = append(fields, report.Field{Key: "saffman_delbruck_length", Title: "L_SD = η_m/(η₊+η₋)", Value: qcell(l, config.DimLength)})
	}

	coef := &report.Table{
		Key:   "coefficients",
		Title: "Inclusion mobility (model predictions)",
		Columns: []report.Column{
			{Key: "name", Title: "quantity"},
			{Key: "value", Title: "value"},
			{Key: "unit", Title: "SI unit"},
			{Key: "readable", Title: "readable"},
			{Key: "method"},
		},
		Notes: []string{predictionNote, "D = k_BT/λ (Einstein relation); D_R is in rad²/s."},
	}
	tr, rot := mob.Translation, mob.Rotation
	add := func(key, title string, v float64, d config.Dim, method string) {
		coef.Rows = append(coef.Rows, []any{report.Cell{Value: key, Text: title}, v, siUnit(d), human(v, d), method})
	}
	if noDrag {
		add("translational_diffusivity", "D_T, translational diffusivity", 0, config.DimDiffusivity, "none")
		add("translational_drag", "λ_T, translational drag", math.Inf(1), dimDrag, "none")
		coef.Notes = append(coef.Notes, "No finite translational drag: neither subphase is deep or over a wall and there is no friction, so nothing resists uniform translation (the 2D Stokes paradox). Give a subphase or friction.")
	} else {
		add("translational_diffusivity", "D_T, translational diffusivity", tr.Diffusivity, config.DimDiffusivity, tr.Method.String())
		add("translational_drag", "λ_T, translational drag", tr.Drag, dimDrag, tr.Method.String())
	}
	add("rotational_diffusivity", "D_R, rotational diffusivity", rot.Diffusivity, config.DimRate, rot.Method.String())
	add("rotational_drag", "λ_R, rotational drag", rot.Drag, dimRotDrag, rot.Method.String())

	methods := &report.Table{
		Key:   "methods",
		Title: "Methods",
		Columns: []report.Column{
			{Key: "quantity"},
			{Key: "method"},
			{Key: "rel_error", Title: "estimated relative error"},
			{Key: "source"},
			{Key: "validity", Title: "validity"},
		},
	}
	if !noDrag {
		methods.Rows = append(methods.Rows, []any{"translation", tr.Method.String(), relErrCell(tr.RelError), tr.Source, tr.Validity})
	}
	methods.Rows = append(methods.Rows, []any{"rotation", rot.Method.String(), relErrCell(rot.RelError), rot.Source, rot.Validity})
	return report.Doc{Fields: fields, Tables: []*report.Table{coef, methods}}
}
