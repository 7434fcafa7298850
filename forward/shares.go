package forward

import "slices"

// Outflow shares (DESIGN §4). A process response is sized as the share of
// its donor pool's outflow that the process takes: with donor-controlled
// transfers every outflow of a pool is k·pool, so the share of transfer j
// is k_j / Σ k over the transfers leaving the same pool, whatever the pool
// size. A process whose transfers leave several pools (immobilization from
// ammonium and nitrate; plant uptake from ammonium, nitrate and organic N)
// is sized by its share of the donors' combined outflow, with every flux
// taken at the site file's pool sizes.

// TransferShare returns the share of its donor pool's outflow that
// transfer j takes under p (0 when nothing leaves the pool).
func (p *Params) TransferShare(s *Site, j int) float64 {
	from := s.Transfers[j].From
	var total float64
	for i, t := range s.Transfers {
		if t.From == from {
			total += p.K[i]
		}
	}
	if total == 0 {
		return 0
	}
	return p.K[j] / total
}

// ProcessShare returns the share of the combined outflow of the donor
// pools of the processes' transfers that those transfers take under p,
// fluxes at the file's pool sizes (0 when the site has no such transfer or
// nothing leaves the donors).
func (p *Params) ProcessShare(s *Site, procs ...string) float64 {
	own, total := p.processFlux(s, procs)
	if total == 0 {
		return 0
	}
	return own / total
}

// processFlux returns the flux (kg N/ha/yr, at file pool sizes) of the
// processes' transfers and the total outflow of their donor pools.
func (p *Params) processFlux(s *Site, procs []string) (own, total float64) {
	donor := make([]bool, len(s.Pools))
	for _, t := range s.Transfers {
		if slices.Contains(procs, t.Process) {
			donor[t.From] = true
		}
	}
	for j, t := range s.Transfers {
		if !donor[t.From] {
			continue
		}
		f := p.K[j] * s.PoolKg[t.From]
		total += f
		if slices.Contains(procs, t.Process) {
			own += f
		}
	}
	return own, total
}
