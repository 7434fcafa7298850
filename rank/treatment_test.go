package rank

import (
	"strings"
	"testing"

	"nlens/forward"
	"nlens/knowledge"
)

// What the result records of the treatment follows the forcing as built:
// a fire's forest-floor combustion (knowledge/forcings.yaml, burned,
// moderate) is not applied on a grassland, which has no forest floor, and
// the result says so instead of listing it as applied.
func TestDescribeTreatmentSkipsAbsentPools(t *testing.T) {
	kb := knowledge.MustDefault()
	site, err := forward.LoadSite("temperate-grassland", kb)
	if err != nil {
		t.Fatal(err)
	}
	if site.PoolIndex("forest-floor") >= 0 {
		t.Fatal("the grassland template now has a forest floor: choose another site for this test")
	}
	got := describeTreatment(kb, site, forward.Treatment{Management: []string{"burned"}, Severity: "moderate"})
	if len(got.Management) != 1 {
		t.Fatalf("management %+v", got.Management)
	}
	var floor bool
	for _, a := range got.Management[0].Actions {
		if strings.HasPrefix(a, "forest floor burned") {
			floor = true
			if !strings.Contains(a, "not applied, the site has no forest-floor pool") {
				t.Errorf("forest-floor move on a grassland: %q", a)
			}
		}
	}
	if !floor {
		t.Errorf("no forest-floor line in %q", got.Management[0].Actions)
	}
}
