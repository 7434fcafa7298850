package forward

import (
	"fmt"
	"slices"
	"strings"

	"nlens/knowledge"
)

// SetMycorrhizalType gives the site another mycorrhizal type (for example
// the one a study states for its site) and resolves the isotope effect of
// every mycorrhizal-transfer again from that type's fungal physiology
// (DESIGN §3). Transfers whose ε the site file gives keep it. The site's
// parameters change, so call it before Params.
func (s *Site) SetMycorrhizalType(kb *knowledge.Base, mycorrhizalType string) error {
	if !slices.Contains(knowledge.MycorrhizalTypes, mycorrhizalType) {
		return fmt.Errorf("unknown mycorrhizal type %q (types: %s)", mycorrhizalType, strings.Join(knowledge.MycorrhizalTypes, ", "))
	}
	if mycorrhizalType == "none" && s.PoolIndex("fungi") >= 0 {
		return fmt.Errorf("site %q has a pool of mycorrhizal fungi, so its mycorrhizal type cannot be none", s.ID)
	}
	s.MycorrhizalType = mycorrhizalType
	eff := kb.MycorrhizalEffect(mycorrhizalType)
	for j := range s.Transfers {
		t := &s.Transfers[j]
		if t.Process != "mycorrhizal-transfer" {
			continue
		}
		t.Effect = eff
		if !t.EpsilonFixed {
			t.Epsilon = eff.EpsilonPermil
		}
		if !t.Epsilon18Fixed {
			t.Epsilon18 = t.D18ORatio * t.Epsilon
		}
	}
	return nil
}

// Offers reports whether the measurement can be made at the site: its
// observable binds to the site's pools and transfers, and, for a
// measurement limited to some mycorrhizal types (sporocarps), the site's
// type is one of them. A site that states no mycorrhizal type is taken to
// offer it when it has fungi (its fungal transfer then uses the
// knowledge's generic, ectomycorrhizal-like effect).
func (s *Site) Offers(m knowledge.Measurement) bool {
	if _, err := s.Observable(m.Observable); err != nil {
		return false
	}
	if len(m.MycorrhizalTypes) > 0 && s.MycorrhizalType != "" {
		return slices.Contains(m.MycorrhizalTypes, s.MycorrhizalType)
	}
	return true
}
