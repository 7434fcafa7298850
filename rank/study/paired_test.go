package study

import (
	"math"
	"strings"
	"testing"
)

// pairedRows: four blocks, each with one control and one fertilized plot
// (invented values). Foliage differences by block: 1.5, 1.0, 1.8, 1.2 ‰.
// By hand with the paired-difference formulas (Zar 2010, Biostatistical
// Analysis, 5th ed., §9.1: d̄ = Σd/b, s_d̄ = s_d/√b, b − 1 df):
// d̄ = 5.5/4 = 1.375; Σ(d − d̄)² = 0.015625 + 0.140625 + 0.180625 +
// 0.030625 = 0.3675; s_d = √(0.3675/3) = 0.35; s_d̄ = 0.35/2 = 0.175; 3 df.
// Read as independent groups the Welch SE would be √(0.72917/4 +
// 0.37667/4) = 0.526: the pairing removes the block effect.
const pairedRows = `sample,group,observable,value,block
c1,control,foliage,-2.0,B1
c2,control,foliage,-1.0,B2
c3,control,foliage,-3.0,B3
c4,control,foliage,-2.5,B4
f1,fert,foliage,-0.5,B1
f2,fert,foliage,0.0,B2
f3,fert,foliage,-1.2,B3
f4,fert,foliage,-1.3,B4
`

const pairedStudy = "site: {template: temperate-deciduous-forest}\ncomparisons: [{control: control, treatment: fert, years: 2}]\nsamples: rows.csv\n"

func TestPairedBlocksSE(t *testing.T) {
	t.Parallel()
	st, err := parse(t, pairedStudy, map[string]string{"rows.csv": pairedRows}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	o := st.Comparisons[0].Observed[0]
	if math.Abs(o.Shift-1.375) > 1e-12 || math.Abs(o.SE-0.175) > 1e-12 || o.DF != 3 || o.Blocks != 4 {
		t.Errorf("paired: shift %g SE %g df %g blocks %d; want 1.375, 0.175, 3, 4 (by hand)", o.Shift, o.SE, o.DF, o.Blocks)
	}
	// Without the block column the same rows are independent groups.
	var plain []string
	for _, l := range strings.Split(strings.TrimSpace(pairedRows), "\n") {
		plain = append(plain, l[:strings.LastIndexByte(l, ',')])
	}
	st, err = parse(t, pairedStudy, map[string]string{"rows.csv": strings.Join(plain, "\n") + "\n"}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	o = st.Comparisons[0].Observed[0]
	welch := math.Sqrt((2.1875/3)/4 + (1.13/3)/4) // sums of squares by hand, as above
	if math.Abs(o.SE-welch) > 1e-12 || o.Blocks != 0 {
		t.Errorf("unpaired: SE %g blocks %d; want Welch %g, 0", o.SE, o.Blocks, welch)
	}
}

// Several samples of a group in one block are averaged before the
// differences; a block present in only one group, or samples without a
// block, fall back to independent groups with a warning that says why.
func TestPairedBlocksUneven(t *testing.T) {
	t.Parallel()
	twice := pairedRows + "c5,control,foliage,-1.0,B1\n" // B1 control mean -1.5: d = 1.0
	st, err := parse(t, pairedStudy, map[string]string{"rows.csv": twice}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if o := st.Comparisons[0].Observed[0]; math.Abs(o.Shift-(1.0+1.0+1.8+1.2)/4) > 1e-12 || o.Blocks != 4 {
		t.Errorf("block means: shift %g blocks %d, want %g over 4 blocks", o.Shift, o.Blocks, 5.0/4)
	}
	for _, tt := range []struct{ extra, why string }{
		{"c5,control,foliage,-1.0,B5\n", `block "B5" is in only one of the groups`},
		{"c5,control,foliage,-1.0,\n", "some samples have no block"},
	} {
		st, err := parse(t, pairedStudy, map[string]string{"rows.csv": pairedRows + tt.extra}, Options{})
		if err != nil {
			t.Fatal(err)
		}
		if o := st.Comparisons[0].Observed[0]; o.Blocks != 0 {
			t.Errorf("%s: read as paired", tt.why)
		}
		if w := strings.Join(st.Warnings, "\n"); !strings.Contains(w, tt.why) {
			t.Errorf("warnings %q do not say %q", w, tt.why)
		}
	}
}
