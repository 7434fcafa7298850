package forward

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"nlens/knowledge"
)

// Kind is what an observable measures.
type Kind int

// Observable kinds.
const (
	KindDelta15 Kind = iota // δ15N of a pool or sum of pools, ‰ AIR
	KindFlux15              // δ15N of a flux (emitted N2O, gas, litterfall), flux-weighted over its transfers, ‰ AIR
	KindSP                  // N2O site preference from the nitrification share, ‰
	KindDelta18             // δ18O of nitrate, ‰ VSMOW
	KindPool                // pool size, kg N/ha (shifts as ln ratio)
	KindFlux                // gross flux, kg N/ha/yr (shifts as ln ratio)
	KindNet                 // net flux: production minus consumption, kg N/ha/yr (shifts as ln ratio)
)

// IsotopeNames are the δ observables of DESIGN §3 that every report lists,
// in display order (pool names come first in simulate output).
var IsotopeNames = []string{"foliage", "roots", "litter", "forest-floor", "soil", "soil-ammonium", "soil-nitrate", "leachate-nitrate", "fungi", "n2o", "nitrate-d18o", "ecosystem"}

// RateNames are the observables of DESIGN §3 that are rates or amounts
// without a pool or process in their name: net rates and foliar N.
var RateNames = []string{"net:mineralization", "net:nitrification", "foliage-n"}

// gasProcesses produce N2O (and N2 where the site has no n2o pool).
var gasProcesses = []string{"nitrifier-gas", "denitrification"}

// Net rates (DESIGN §3): gross production minus the consumption that a
// field incubation of soil (a sealed core or bag, no plants, no leaching)
// also sees, namely microbial immobilization. Net mineralization is the
// change of NH4+ plus NO3− in the incubation: mineralization (from mineral
// soil and forest floor) − immobilization-ammonium − immobilization-nitrate.
// Net nitrification is the change of NO3−: nitrification −
// immobilization-nitrate. Plant and mycorrhizal uptake, leaching and gas
// losses are excluded, as in the incubation (Stark & Hart 1997; Booth et
// al. 2005 for the net:gross contrast). Both are compared as log-ratios,
// so they are undefined where the net rate is not positive; every built-in
// template has positive net rates (forward/template_test.go).
var netTerms = map[string][]netTerm{
	"net:mineralization": {{"mineralization", 1}, {"immobilization-ammonium", -1}, {"immobilization-nitrate", -1}},
	"net:nitrification":  {{"nitrification", 1}, {"immobilization-nitrate", -1}},
}

type netTerm struct {
	process string
	sign    float64
}

// Observable is a quantity the model predicts for a site, bound to the
// site's pools and transfers.
type Observable struct {
	Name      string
	Kind      Kind
	pools     []int     // pools summed (δ, pool size)
	transfers []int     // transfers summed (fluxes, gas, litterfall)
	donors    []int     // donor pool of each of transfers
	signs     []float64 // for KindNet: +1 production, −1 consumption, per transfer
	nitGas    []int     // for KindSP: which of transfers are nitrifier-gas
}

// LogRatio reports whether shifts of the observable are ln(treatment/control)
// rather than differences in ‰.
func (o Observable) LogRatio() bool {
	return o.Kind == KindPool || o.Kind == KindFlux || o.Kind == KindNet
}

// Unit is the observable's unit as printed.
func (o Observable) Unit() string {
	switch o.Kind {
	case KindPool:
		return "kg N/ha"
	case KindFlux, KindNet:
		return "kg N/ha/yr"
	}
	return "‰"
}

// Observable binds a name to the site. Names: the pool names; foliage,
// roots, litter (the litterfall flux), forest-floor, soil (mineral soil:
// organic, ammonium and nitrate), soil-ammonium, soil-nitrate,
// leachate-nitrate, fungi, n2o (emitted N2O), n2o-sp, nitrate-d18o,
// ecosystem; pool:<name>; flux:<process>; flux:n2o (emitted N2O, or where
// the site has no n2o pool the gaseous flux of nitrifier-gas and
// denitrification); net:mineralization and net:nitrification (see
// netTerms); foliage-n (foliar N as the foliage pool, or the plant pool
// where the site has no foliage; the biomass is assumed unchanged, so its
// log-ratio is that of the N concentration).
func (s *Site) Observable(name string) (Observable, error) {
	o := Observable{Name: name}
	pool := func(p string) (int, error) {
		i := s.PoolIndex(p)
		if i < 0 {
			return 0, fmt.Errorf("observable %q needs a %s pool, which site %q does not have", name, p, s.ID)
		}
		return i, nil
	}
	one := func(p string) (Observable, error) {
		i, err := pool(p)
		o.pools = []int{i}
		return o, err
	}
	// flux collects the transfers of a process with a non-zero rate.
	flux := func(proc string) {
		for j, t := range s.Transfers {
			if t.Process == proc && t.RateKgPerHaYr > 0 {
				o.transfers = append(o.transfers, j)
				o.donors = append(o.donors, t.From)
			}
		}
	}
	// emitted binds the n2o-emission flux of a site with an n2o pool; it
	// reports false for a site without one.
	emitted := func() (bool, error) {
		if s.PoolIndex("n2o") < 0 {
			return false, nil
		}
		flux("n2o-emission")
		if len(o.transfers) == 0 {
			return true, fmt.Errorf("observable %q needs an n2o-emission transfer from the n2o pool, which site %q does not have", name, s.ID)
		}
		return true, nil
	}
	gas := func() error {
		for j, t := range s.Transfers {
			if slices.Contains(gasProcesses, t.Process) && t.RateKgPerHaYr > 0 {
				if t.Process == "nitrifier-gas" {
					o.nitGas = append(o.nitGas, len(o.transfers))
				}
				o.transfers = append(o.transfers, j)
				o.donors = append(o.donors, t.From)
			}
		}
		if len(o.transfers) == 0 {
			return fmt.Errorf("observable %q needs a nitrifier-gas or denitrification transfer, which site %q does not have", name, s.ID)
		}
		return nil
	}
	switch {
	case name == "foliage":
		if s.PoolIndex("foliage") >= 0 {
			return one("foliage")
		}
		return one("plant")
	case name == "n2o":
		o.Kind = KindFlux15
		if ok, err := emitted(); ok {
			return o, err
		}
		return o, gas()
	case slices.Contains(PoolNames, name):
		return one(name)
	case name == "roots":
		return one("plant")
	case name == "litter":
		o.Kind = KindFlux15
		flux("litterfall")
		if len(o.transfers) == 0 {
			return o, fmt.Errorf("observable %q needs a litterfall transfer, which site %q does not have", name, s.ID)
		}
		return o, nil
	case name == "soil-ammonium":
		return one("ammonium")
	case name == "soil-nitrate" || name == "leachate-nitrate":
		return one("nitrate")
	case name == "soil":
		for _, p := range []string{"organic", "ammonium", "nitrate"} {
			i, _ := pool(p)
			o.pools = append(o.pools, i)
		}
		return o, nil
	case name == "ecosystem":
		for i := range s.Pools {
			o.pools = append(o.pools, i)
		}
		return o, nil
	case name == "n2o-sp":
		o.Kind = KindSP
		return o, gas()
	case name == "nitrate-d18o":
		o.Kind = KindDelta18
		return o, nil
	case name == "foliage-n":
		o.Kind = KindPool
		if s.PoolIndex("foliage") >= 0 {
			return one("foliage")
		}
		return one("plant")
	case netTerms[name] != nil:
		o.Kind = KindNet
		for k, term := range netTerms[name] {
			n := len(o.transfers)
			flux(term.process)
			if k == 0 && len(o.transfers) == 0 {
				return o, fmt.Errorf("observable %q needs a %s transfer, which site %q does not have", name, term.process, s.ID)
			}
			for range len(o.transfers) - n {
				o.signs = append(o.signs, term.sign)
			}
		}
		return o, nil
	case strings.HasPrefix(name, "pool:"):
		o.Kind = KindPool
		i, err := pool(strings.TrimPrefix(name, "pool:"))
		o.pools = []int{i}
		return o, err
	case strings.HasPrefix(name, "flux:"):
		o.Kind = KindFlux
		proc := strings.TrimPrefix(name, "flux:")
		if proc == "n2o" {
			if ok, err := emitted(); ok {
				return o, err
			}
			return o, gas()
		}
		for j, t := range s.Transfers {
			if t.Process == proc {
				o.transfers = append(o.transfers, j)
				o.donors = append(o.donors, t.From)
			}
		}
		if len(o.transfers) == 0 {
			return o, fmt.Errorf("observable %q: site %q has no %s transfer", name, s.ID, proc)
		}
		return o, nil
	}
	return o, fmt.Errorf("unknown observable %q (observables: %s, n2o-sp, %s, pool:<pool>, flux:<process>)", name, strings.Join(IsotopeNames, ", "), strings.Join(RateNames, ", "))
}

// LogRatioName reports whether shifts of the named observable are compared
// as ln(treatment/control): pool sizes, fluxes, net rates and foliar N.
func LogRatioName(name string) bool {
	return strings.HasPrefix(name, "pool:") || strings.HasPrefix(name, "flux:") || strings.HasPrefix(name, "net:") || name == "foliage-n"
}

// KnownObservable reports whether name is an observable of some site
// (without binding it to one).
func KnownObservable(name string) bool {
	if slices.Contains(PoolNames, name) || slices.Contains(IsotopeNames, name) || slices.Contains(RateNames, name) || name == "n2o-sp" {
		return true
	}
	if p, ok := strings.CutPrefix(name, "pool:"); ok {
		return slices.Contains(PoolNames, p)
	}
	if p, ok := strings.CutPrefix(name, "flux:"); ok {
		return p == "n2o" || slices.Contains(knowledge.Processes, p)
	}
	return false
}

// Value returns the observable in state x under parameters p (fluxes need
// the rate constants and effects).
func (o Observable) Value(x *State, p *Params) float64 {
	switch o.Kind {
	case KindDelta15:
		var n14, n15 float64
		for _, i := range o.pools {
			n14 += x.N14[i]
			n15 += x.N15[i]
		}
		return Delta(n15/n14, RAir)
	case KindPool:
		return x.Total(o.pools[0])
	case KindDelta18:
		if !x.HasO {
			return math.NaN()
		}
		return Delta(x.O18/x.O16, RVSMOW)
	}
	if o.Kind == KindNet {
		var net float64
		for i, j := range o.transfers {
			d := o.donors[i]
			net += o.signs[i] * (p.K[j]*x.N14[d] + p.K[j]/Alpha(p.Eps15[j])*x.N15[d])
		}
		return net
	}
	var f14, f15 float64
	for i, j := range o.transfers {
		f14 += p.K[j] * x.N14[o.donors[i]]
		f15 += p.K[j] / Alpha(p.Eps15[j]) * x.N15[o.donors[i]]
	}
	switch o.Kind {
	case KindFlux15:
		return Delta(f15/f14, RAir)
	case KindSP:
		var nit float64
		for _, i := range o.nitGas {
			j := o.transfers[i]
			nit += p.K[j]*x.N14[o.donors[i]] + p.K[j]/Alpha(p.Eps15[j])*x.N15[o.donors[i]]
		}
		return SitePreferenceMix(nit / (f14 + f15))
	}
	return f14 + f15
}

// Shift is the treatment-minus-control change of the observable: a
// difference in ‰ for δ values and ln(changed/base) for pools and fluxes.
func (o Observable) Shift(base, changed float64) float64 {
	if o.LogRatio() {
		return math.Log(changed / base)
	}
	return changed - base
}

// DeltaNames lists, for simulate output, the pool names the site has and
// then the δ observables of IsotopeNames that the site can compute.
func (s *Site) DeltaNames() []string {
	out := append([]string(nil), s.Pools...)
	for _, name := range IsotopeNames {
		if slices.Contains(out, name) {
			continue
		}
		if _, err := s.Observable(name); err == nil {
			out = append(out, name)
		}
	}
	return out
}

// Same reports whether two observables measure the same quantity (for
// example soil-nitrate and leachate-nitrate are both the nitrate pool's δ).
func (o Observable) Same(x Observable) bool {
	return o.Kind == x.Kind && slices.Equal(o.pools, x.pools) && slices.Equal(o.transfers, x.transfers) && slices.Equal(o.signs, x.signs)
}
