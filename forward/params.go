package forward

import "fmt"

// Params is one numerical realisation of a site: the values that a change
// or an uncertainty draw may alter. Slices are indexed like Site.Transfers
// and Site.Inputs; added inputs are appended after the site's own.
type Params struct {
	// K is the rate constant of each transfer, yr⁻¹ (rate/pool at baseline).
	K []float64
	// Eps15 and Eps18 are each transfer's isotope effects, ‰.
	Eps15, Eps18 []float64
	Inputs       []InputParam
	// NitrificationD18O is the δ18O (‰ VSMOW) of nitrate O made by
	// nitrification.
	NitrificationD18O float64
}

// InputParam is one input's rate and isotopic composition.
type InputParam struct {
	To            int
	RateKgPerHaYr float64
	D15N          float64 // ‰ AIR
	D18O          float64 // ‰ VSMOW; used for inputs to nitrate
}

// Params returns the site's nominal parameters: k = rate/pool from the file,
// effects and inputs as given or defaulted.
func (s *Site) Params() Params {
	p := Params{
		K:                 make([]float64, len(s.Transfers)),
		Eps15:             make([]float64, len(s.Transfers)),
		Eps18:             make([]float64, len(s.Transfers)),
		Inputs:            make([]InputParam, len(s.Inputs)),
		NitrificationD18O: s.NitrificationD18O,
	}
	for j, t := range s.Transfers {
		if t.RateKgPerHaYr > 0 {
			p.K[j] = t.RateKgPerHaYr / s.PoolKg[t.From]
		}
		p.Eps15[j] = t.Epsilon
		p.Eps18[j] = t.Epsilon18
	}
	for i, in := range s.Inputs {
		p.Inputs[i] = InputParam{To: in.To, RateKgPerHaYr: in.RateKgPerHaYr, D15N: in.D15N, D18O: in.D18O}
	}
	return p
}

// CopyFrom makes p a deep copy of q, reusing p's storage.
func (p *Params) CopyFrom(q *Params) {
	p.K = append(p.K[:0], q.K...)
	p.Eps15 = append(p.Eps15[:0], q.Eps15...)
	p.Eps18 = append(p.Eps18[:0], q.Eps18...)
	p.Inputs = append(p.Inputs[:0], q.Inputs...)
	p.NitrificationD18O = q.NitrificationD18O
}

// Scale multiplies the rate constant of every transfer of the process by
// factor and reports how many transfers it touched.
func (p *Params) Scale(s *Site, process string, factor float64) int {
	n := 0
	for j, t := range s.Transfers {
		if t.Process == process {
			p.K[j] *= factor
			n++
		}
	}
	return n
}

// AddInput appends an input of rate kg N/ha/yr to pool index to.
func (p *Params) AddInput(to int, rate, d15n, d18o float64) {
	p.Inputs = append(p.Inputs, InputParam{To: to, RateKgPerHaYr: rate, D15N: d15n, D18O: d18o})
}

// SetNitrateShare moves plant uptake between ammonium and nitrate: the total
// uptake flux at the baseline pool sizes is kept and a share of it (0–1) is
// taken as nitrate. Transfers of uptake-ammonium and uptake-nitrate are
// rescaled in proportion; it fails when the site lacks either.
func (p *Params) SetNitrateShare(s *Site, share float64) error {
	fa, fn := p.uptake(s)
	if fa <= 0 || fn <= 0 {
		return fmt.Errorf("site %q needs both uptake-ammonium and uptake-nitrate transfers to shift the form of uptake", s.ID)
	}
	total := fa + fn
	for j, t := range s.Transfers {
		switch t.Process {
		case "uptake-ammonium":
			p.K[j] *= (1 - share) * total / fa
		case "uptake-nitrate":
			p.K[j] *= share * total / fn
		}
	}
	return nil
}

// NitrateShare returns the share of plant uptake taken as nitrate under p at
// the file's pool sizes (the quantity SetNitrateShare sets).
func (p *Params) NitrateShare(s *Site) float64 {
	fa, fn := p.uptake(s)
	if fa+fn == 0 {
		return 0
	}
	return fn / (fa + fn)
}

// uptake returns the plant uptake fluxes of ammonium and nitrate under p at
// the file's pool sizes, kg N/ha/yr.
func (p *Params) uptake(s *Site) (ammonium, nitrate float64) {
	for j, t := range s.Transfers {
		switch t.Process {
		case "uptake-ammonium":
			ammonium += p.K[j] * s.PoolKg[t.From]
		case "uptake-nitrate":
			nitrate += p.K[j] * s.PoolKg[t.From]
		}
	}
	return ammonium, nitrate
}
