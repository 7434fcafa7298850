package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"nlens/forward"
	"nlens/rank/report"
)

func newCalcCmd(e *env) *cobra.Command {
	cmd := &cobra.Command{
		Use:   "calc rayleigh|open|mix|gas-loss|convert|ndfa",
		Short: "Quick answers from the published formulas, with the formula and its source",
		Long: strings.TrimSpace(`
calc evaluates one published formula and prints it with its source, so a
quick number by hand can be checked. ε is in ‰ and positive when the product
is depleted (α = 1 + ε/1000). f is the fraction of substrate REMAINING.`),
		Example: strings.Trim(`
  nlens calc rayleigh --d0 5 --epsilon 15 --f 0.2
  nlens calc open --din 0 --epsilon 10 --consumed 0.6
  nlens calc mix --source fertilizer=0:0.5 --source manure=10:0.5 --mixture 4:0.5
  nlens calc gas-loss --soil 5 --inputs 0 --eps-gas 15 --eps-leach 0
  nlens calc convert --d15n 10
  nlens calc ndfa --reference 6 --legume 1 --b -1`, "\n"),
		Args: cobra.NoArgs,
	}
	var format string
	cmd.PersistentFlags().StringVar(&format, "format", report.FormatTable, "table or json")
	add := func(use, short, example string, bind func(f *flagSet), compute func() (report.Answer, error)) {
		c := &cobra.Command{
			Use:     use,
			Short:   short,
			Example: example,
			Args:    cobra.NoArgs,
			RunE: func(c *cobra.Command, _ []string) error {
				return wrapRun(func() error {
					if err := checkFormat(format, report.FormatTable, report.FormatJSON); err != nil {
						return err
					}
					a, err := compute()
					if err != nil {
						return err
					}
					return report.WriteAnswer(e.stdout, a, format)
				})
			},
		}
		bind(&flagSet{c})
		cmd.AddCommand(c)
	}

	var d0, eps, f, ds float64
	add("rayleigh", "Closed-system Rayleigh fractionation (Mariotti et al. 1981)",
		"  nlens calc rayleigh --d0 0 --epsilon 20 --f 0.5\n  nlens calc rayleigh --d0 0 --epsilon 20 --ds 13.684   # the fraction remaining",
		func(fs *flagSet) {
			fs.float(&d0, "d0", 0, "initial substrate δ (‰)")
			fs.required(&eps, "epsilon", "isotope effect ε (‰, positive: product depleted)")
			fs.float(&f, "f", math.NaN(), "fraction of substrate remaining (0 < f ≤ 1)")
			fs.float(&ds, "ds", math.NaN(), "observed residual δ, to solve for f instead")
		},
		func() (report.Answer, error) {
			a := report.Answer{
				Title:  "Closed-system Rayleigh fractionation",
				Source: "Mariotti et al. 1981 (Plant and Soil 62:413–430); exact forms as in Fry 2006, suppl. 7B",
				Formula: []string{
					"α = 1 + ε/1000; f = fraction of substrate remaining",
					"residual:    δs   = (δ0 + 1000)·f^(1/α − 1) − 1000        ≈ δ0 − ε·ln f",
					"instant:     δp   = (δs + 1000)/α − 1000                  ≈ δs − ε",
					"accumulated: δacc = (δ0 + 1000)·(1 − f^(1/α))/(1 − f) − 1000",
					"                                                  ≈ δ0 + ε·f·ln f/(1 − f)",
				},
			}
			switch {
			case !math.IsNaN(ds):
				fr := forward.RayleighFraction(d0, ds, eps)
				a.Inputs = []report.Quantity{report.Q("δ0", d0, "‰"), report.Q("ε", eps, "‰"), report.Q("δs observed", ds, "‰")}
				a.Results = []report.Quantity{report.Q("f remaining (exact)", fr, ""), report.Q("f remaining (approx.)", math.Exp(-(ds-d0)/eps), "")}
				return a, nil
			case math.IsNaN(f):
				return a, badf("give --f (fraction remaining) or --ds (observed residual δ)")
			case !(f > 0 && f <= 1):
				return a, badf("--f is the fraction remaining and must lie in (0, 1], got %g", f)
			}
			a.Inputs = []report.Quantity{report.Q("δ0", d0, "‰"), report.Q("ε", eps, "‰"), report.Q("f remaining", f, "")}
			a.Results = []report.Quantity{
				report.Q("residual δs (exact)", forward.RayleighResidual(d0, eps, f), "‰"),
				report.Q("instantaneous product (exact)", forward.RayleighInstant(d0, eps, f), "‰"),
				report.Q("accumulated product (exact)", forward.RayleighAccumulated(d0, eps, f), "‰"),
				report.Q("residual δs (approx.)", forward.RayleighResidualApprox(d0, eps, f), "‰"),
				report.Q("instantaneous product (approx.)", forward.RayleighInstantApprox(d0, eps, f), "‰"),
				report.Q("accumulated product (approx.)", forward.RayleighAccumulatedApprox(d0, eps, f), "‰"),
			}
			return a, nil
		})

	var din, consumed float64
	add("open", "Open system at steady state: substrate and product δ",
		"  nlens calc open --din 0 --epsilon 10 --consumed 0.6",
		func(fs *flagSet) {
			fs.float(&din, "din", 0, "δ of the influx (‰)")
			fs.required(&eps, "epsilon", "isotope effect ε (‰)")
			fs.required(&consumed, "consumed", "fraction F of the influx consumed by the fractionating reaction (0–1)")
		},
		func() (report.Answer, error) {
			if !(consumed >= 0 && consumed <= 1) {
				return report.Answer{}, badf("--consumed must lie in [0, 1], got %g", consumed)
			}
			return report.Answer{
				Title:  "Open system at steady state",
				Source: "Hayes 2004; Fry 2006 (steady-state split of a pool between a fractionating sink and export)",
				Formula: []string{
					"R_s = R_in / [(1 − F) + F/α],  R_p = R_s/α",
					"≈ δs = δin + ε·F,  δp = δin − ε·(1 − F)",
				},
				Inputs: []report.Quantity{report.Q("δin", din, "‰"), report.Q("ε", eps, "‰"), report.Q("F consumed", consumed, "")},
				Results: []report.Quantity{
					report.Q("substrate δs (exact)", forward.OpenSubstrate(din, eps, consumed), "‰"),
					report.Q("product δp (exact)", forward.OpenProduct(din, eps, consumed), "‰"),
					report.Q("substrate δs (approx.)", forward.OpenSubstrateApprox(din, eps, consumed), "‰"),
					report.Q("product δp (approx.)", forward.OpenProductApprox(din, eps, consumed), "‰"),
				},
			}, nil
		})

	var sources []string
	var mixture string
	add("mix", "Two-source (one isotope) or three-source (two isotopes) mixing with error propagation",
		"  nlens calc mix --source fertilizer=0:0.5 --source manure=10:0.5 --mixture 4:0.5\n  nlens calc mix --source atm=0:1,70:3 --source fert=0:1,22:2 --source soil=-5:1,0:2 --mixture -2:0.5,20:1",
		func(fs *flagSet) {
			fs.c.Flags().StringArrayVar(&sources, "source", nil, "NAME=MEAN[:SE][,MEAN2[:SE]] (repeat 2 or 3 times; SE of the mean)")
			fs.c.Flags().StringVar(&mixture, "mixture", "", "MEAN[:SE][,MEAN2[:SE]] of the mixture")
		},
		func() (report.Answer, error) { return mixAnswer(sources, mixture) })

	var soil, inputs, epsGas, epsLeach float64
	add("gas-loss", "Fraction of ecosystem N losses leaving as gas (Houlton & Bai 2009)",
		"  nlens calc gas-loss --soil 5 --inputs 0 --eps-gas 15 --eps-leach 0",
		func(fs *flagSet) {
			fs.required(&soil, "soil", "δ15N of the terrestrial biosphere, soil and plants (‰)")
			fs.float(&inputs, "inputs", 0, "δ15N of the N inputs (‰)")
			fs.float(&epsGas, "eps-gas", 15, "ε of gaseous losses (‰, nlens sign: positive)")
			fs.float(&epsLeach, "eps-leach", 0, "ε of leaching losses (‰, nlens sign)")
		},
		func() (report.Answer, error) {
			if epsGas == epsLeach {
				return report.Answer{}, badf("--eps-gas and --eps-leach must differ")
			}
			fg := forward.GasLossFraction(soil, inputs, epsGas, epsLeach)
			a := report.Answer{
				Title:  "Fraction of N losses as gas, from isotope mass balance at steady state",
				Source: "Houlton & Bai 2009 (PNAS 106:21713); written here with ε > 0 for depleted products",
				Formula: []string{
					"f_gas = (δ_TB − δ_I − ε_L) / (ε_G − ε_L)",
					"(Houlton & Bai write ε < 0: f_gas = (δ_TB − δ_I + ε_L)/(ε_L − ε_G) — same number)",
				},
				Inputs:  []report.Quantity{report.Q("δ_TB (soil and plants)", soil, "‰"), report.Q("δ_I (inputs)", inputs, "‰"), report.Q("ε_G", epsGas, "‰"), report.Q("ε_L", epsLeach, "‰")},
				Results: []report.Quantity{report.Q("f_gas", fg, ""), report.Q("f_leaching", 1-fg, "")},
			}
			if fg < 0 || fg > 1 {
				a.Notes = append(a.Notes, "f_gas lies outside 0–1: the inputs, effects and a steady state are not consistent with these δ values.")
			}
			return a, nil
		})

	var d15n, atom, ratio float64
	add("convert", "Convert δ15N ↔ 15N/14N ratio ↔ atom %",
		"  nlens calc convert --d15n 10\n  nlens calc convert --atom-percent 0.37",
		func(fs *flagSet) {
			fs.float(&d15n, "d15n", math.NaN(), "δ15N (‰ vs AIR)")
			fs.float(&atom, "atom-percent", math.NaN(), "15N atom percent")
			fs.float(&ratio, "ratio", math.NaN(), "15N/14N ratio")
		},
		func() (report.Answer, error) {
			given := 0
			for _, v := range []float64{d15n, atom, ratio} {
				if !math.IsNaN(v) {
					given++
				}
			}
			if given != 1 {
				return report.Answer{}, badf("give exactly one of --d15n, --atom-percent, --ratio")
			}
			var d float64
			var in report.Quantity
			switch {
			case !math.IsNaN(d15n):
				d, in = d15n, report.Q("δ15N", d15n, "‰ AIR")
			case !math.IsNaN(atom):
				if !(atom > 0 && atom < 100) {
					return report.Answer{}, badf("--atom-percent must lie in (0, 100), got %g", atom)
				}
				d, in = forward.FromAtomPercent(atom), report.Q("atom %", atom, "%")
			default:
				if !(ratio > 0) {
					return report.Answer{}, badf("--ratio must be positive, got %g", ratio)
				}
				d, in = forward.Delta(ratio, forward.RAir), report.Q("15N/14N", ratio, "")
			}
			return report.Answer{
				Title:  "δ15N, ratio and atom percent",
				Source: "R_AIR = 0.0036765 (Junk & Svec 1958, via CIAAW); exact two-isotope relations",
				Formula: []string{
					"R = R_AIR·(1 + δ/1000);  atom % = 100·R/(1 + R);  R = x/(1 − x)",
				},
				Inputs: []report.Quantity{in},
				Results: []report.Quantity{
					report.Q("δ15N", d, "‰ AIR"),
					report.Q("15N/14N", forward.Ratio(d, forward.RAir), ""),
					report.Q("atom %", forward.AtomPercent(d), "%"),
				},
			}, nil
		})

	var ref, legume, bval float64
	add("ndfa", "Share of legume N from fixation by the natural-abundance method",
		"  nlens calc ndfa --reference 6 --legume 1 --b -1",
		func(fs *flagSet) {
			fs.required(&ref, "reference", "δ15N of a non-fixing reference plant (‰)")
			fs.required(&legume, "legume", "δ15N of the legume (‰)")
			fs.float(&bval, "b", -1, "B: δ15N of a legume wholly dependent on fixation (‰)")
		},
		func() (report.Answer, error) {
			if ref == bval {
				return report.Answer{}, badf("--reference and --b must differ")
			}
			v := forward.Ndfa(ref, legume, bval)
			a := report.Answer{
				Title:   "N derived from the atmosphere (%Ndfa)",
				Source:  "Shearer & Kohl 1986 (Aust. J. Plant Physiol. 13:699–756); formula as quoted by Ledgard 1989",
				Formula: []string{"%Ndfa = 100·(δ_ref − δ_legume)/(δ_ref − B)"},
				Inputs:  []report.Quantity{report.Q("δ_ref", ref, "‰"), report.Q("δ_legume", legume, "‰"), report.Q("B", bval, "‰")},
				Results: []report.Quantity{report.Q("%Ndfa", v, "%")},
			}
			if v < 0 || v > 100 {
				a.Notes = append(a.Notes, "%Ndfa outside 0–100: the reference plant may not sample the same soil N, or B does not fit this legume.")
			}
			return a, nil
		})
	return cmd
}

// flagSet binds typed flags to a command, marking required ones.
type flagSet struct{ c *cobra.Command }

func (f *flagSet) float(p *float64, name string, def float64, usage string) {
	f.c.Flags().Float64Var(p, name, def, usage)
}

func (f *flagSet) required(p *float64, name, usage string) {
	f.c.Flags().Float64Var(p, name, 0, usage+" (required)")
	_ = f.c.MarkFlagRequired(name)
}

// parseMeanSE reads MEAN[:SE][,MEAN2[:SE]].
func parseMeanSE(s string) ([]forward.Value, error) {
	var out []forward.Value
	for _, part := range strings.Split(s, ",") {
		m, se, hasSE := strings.Cut(strings.TrimSpace(part), ":")
		mv, err := strconv.ParseFloat(m, 64)
		if err != nil {
			return nil, fmt.Errorf("%q is not a number", m)
		}
		v := forward.Value{Mean: mv}
		if hasSE {
			if v.SE, err = strconv.ParseFloat(se, 64); err != nil || v.SE < 0 {
				return nil, fmt.Errorf("standard error %q must be a number ≥ 0", se)
			}
		}
		out = append(out, v)
	}
	return out, nil
}

func mixAnswer(sources []string, mixture string) (report.Answer, error) {
	if mixture == "" {
		return report.Answer{}, badf("give --mixture MEAN[:SE]")
	}
	mix, err := parseMeanSE(mixture)
	if err != nil {
		return report.Answer{}, badf("--mixture: %v", err)
	}
	var names []string
	var vals [][]forward.Value
	for _, s := range sources {
		name, v, ok := strings.Cut(s, "=")
		if !ok {
			return report.Answer{}, badf("--source %q: expected NAME=MEAN[:SE]", s)
		}
		vs, err := parseMeanSE(v)
		if err != nil {
			return report.Answer{}, badf("--source %q: %v", s, err)
		}
		if len(vs) != len(mix) {
			return report.Answer{}, badf("--source %q has %d isotope value(s) but the mixture has %d", s, len(vs), len(mix))
		}
		names = append(names, name)
		vals = append(vals, vs)
	}
	a := report.Answer{Source: "Phillips & Gregg 2001 (Oecologia 127:171–179): linear mixing with first-order propagation of the SEs of all means"}
	for i, n := range names {
		for k, v := range vals[i] {
			label := n
			if len(mix) == 2 {
				label += [2]string{" δ15N", " δ18O"}[k]
			}
			a.Inputs = append(a.Inputs, report.Q(label, v.Mean, "‰"), report.Q(label+" SE", v.SE, "‰"))
		}
	}
	for k, v := range mix {
		label := "mixture"
		if len(mix) == 2 {
			label += [2]string{" δ15N", " δ18O"}[k]
		}
		a.Inputs = append(a.Inputs, report.Q(label, v.Mean, "‰"), report.Q(label+" SE", v.SE, "‰"))
	}
	switch {
	case len(names) == 2 && len(mix) == 1:
		fa, fb, err := forward.MixTwo(vals[0][0], vals[1][0], mix[0])
		if err != nil {
			return a, badInput{err}
		}
		a.Title = "Two-source mixing"
		a.Formula = []string{
			"f_A = (δ_M − δ_B)/(δ_A − δ_B),  f_B = 1 − f_A",
			"Var(f_A) = [σ²_M + f_A²·σ²_A + (1 − f_A)²·σ²_B]/(δ_A − δ_B)²  (σ: SE of each mean)",
		}
		a.Results = []report.Quantity{report.Q("fraction "+names[0], fa.Fraction, ""), report.Q("SE", fa.SE, ""), report.Q("fraction "+names[1], fb.Fraction, ""), report.Q("SE", fb.SE, "")}
	case len(names) == 3 && len(mix) == 2:
		var src [3][2]forward.Value
		for i := range 3 {
			src[i] = [2]forward.Value{vals[i][0], vals[i][1]}
		}
		r, err := forward.MixThree(src, [2]forward.Value{mix[0], mix[1]})
		if err != nil {
			return a, badInput{err}
		}
		a.Title = "Three-source, two-isotope mixing"
		a.Formula = []string{"f_A + f_B + f_C = 1;  Σ f_i·δ15N_i = δ15N_M;  Σ f_i·δ18O_i = δ18O_M"}
		for i, n := range names {
			a.Results = append(a.Results, report.Q("fraction "+n, r[i].Fraction, ""), report.Q("SE", r[i].SE, ""))
		}
	default:
		return a, badf("give 2 sources with one isotope value each, or 3 sources with two (δ15N,δ18O); got %d source(s) with %d value(s)", len(names), len(mix))
	}
	for _, q := range a.Results {
		if q.Value != nil && (*q.Value < 0 || *q.Value > 1) && q.Name != "SE" {
			a.Notes = append(a.Notes, "A fraction lies outside 0–1: the mixture is not inside the sources' range; check the end-members.")
			break
		}
	}
	return a, nil
}
