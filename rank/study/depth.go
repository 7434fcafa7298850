package study

import (
	"fmt"
	"regexp"
	"slices"
	"strings"

	"nlens/forward"
)

// Soil layers of a samples row, from its depth_cm or horizon cell.
//
// Depths are in cm below the top of the mineral soil, so the forest floor
// (the organic layer above it) has depths ≤ 0: a single depth ≤ 0, or a
// range whose deeper end is ≤ 0 ("-5-0"). A mineral depth is one > 0, or a
// range reaching below 0 ("0-10"). Horizon designations: O, Oi, Oe, Oa
// (Soil Survey Staff, Keys to Soil Taxonomy) and their European
// counterparts L, F, H, Ol, Of, Oh (litter, fermented and humified layers;
// common practice) are the forest floor; A, E, B, C and their
// subdivisions are mineral soil.

// layer is where a row's depth or horizon puts it.
type layer int

const (
	layerUnknown layer = iota // no depth or horizon given
	layerFloor                // forest floor (organic layer)
	layerMineral              // mineral soil
)

// forestFloor is the observable of the forest-floor pool (DESIGN §3).
const forestFloor = "forest-floor"

var (
	reDepthRange = regexp.MustCompile(`^\s*([+\-−]?[0-9.,]+)\s*(?:-|–|—|to|\.\.)\s*([+\-−]?[0-9.,]+)\s*$`)
	floorHorizon = []string{"O", "Oi", "Oe", "Oa", "Ol", "Of", "Oh", "L", "F", "H"}
)

// depthLayer reads a depth_cm cell: a depth or a range of depths in cm,
// with num reading each number.
func depthLayer(s string, num func(string) (float64, bool)) (layer, bool) {
	s = strings.TrimSpace(s)
	if s == "" {
		return layerUnknown, true
	}
	if t, ok := strings.CutSuffix(strings.ToLower(s), "cm"); ok {
		s = strings.TrimSpace(t) // "0-10 cm"
	}
	if v, ok := num(s); ok {
		if v <= 0 {
			return layerFloor, true
		}
		return layerMineral, true
	}
	m := reDepthRange.FindStringSubmatch(s)
	if m == nil {
		return layerUnknown, false
	}
	a, ok1 := num(m[1])
	b, ok2 := num(m[2])
	if !ok1 || !ok2 {
		return layerUnknown, false
	}
	if max(a, b) <= 0 {
		return layerFloor, true
	}
	return layerMineral, true
}

// horizonLayer reads a horizon cell.
func horizonLayer(s string) (layer, bool) {
	s = strings.TrimSpace(s)
	switch {
	case s == "":
		return layerUnknown, true
	case slices.Contains(floorHorizon, s), s[0] == 'O' || s[0] == 'o':
		return layerFloor, true
	case strings.ContainsRune("AEBCR", rune(s[0]&^0x20)) && s[0] < 0x80:
		return layerMineral, true
	}
	return layerUnknown, false
}

// hasForestFloor reports whether observations can be assigned to a
// forest-floor pool of the site.
func hasForestFloor(site *forward.Site) bool {
	return site != nil && site.PoolIndex(forestFloor) >= 0 && forward.KnownObservable(forestFloor)
}

// layerOf combines a row's depth and horizon cells; a message when either
// is unreadable or they disagree.
func layerOf(depth, horizon string, num func(string) (float64, bool)) (layer, string, string) {
	d, ok := depthLayer(depth, num)
	if !ok {
		return layerUnknown, "depth_cm", fmt.Sprintf("expected a depth in cm such as 10, 0-10 or -5 (forest floor above the mineral soil), got %q", depth)
	}
	h, ok := horizonLayer(horizon)
	if !ok {
		return layerUnknown, "horizon", fmt.Sprintf("expected a horizon designation such as Oi, Oe, Oa (forest floor) or A, B (mineral soil), got %q", horizon)
	}
	switch {
	case d == layerUnknown:
		return h, "", ""
	case h == layerUnknown || h == d:
		return d, "", ""
	}
	return layerUnknown, "horizon", fmt.Sprintf("horizon %q and depth %q disagree: one is forest floor, the other mineral soil", horizon, depth)
}
