package report

import (
	"fmt"
	"image/color"
	"math"
	"testing"
)

// Colour-vision-deficiency simulation matrices for full severity (1.0),
// applied to linear RGB: Machado, Oliveira & Fernandes (2009), A
// physiologically-based model for simulation of color vision deficiency,
// IEEE TVCG 15(6): 1291–1298, table of severity 1.0 (values from memory).
var cvd = map[string][3][3]float64{
	"normal": {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}},
	"protan": {{0.152286, 1.052583, -0.204868}, {0.114503, 0.786281, 0.099216}, {-0.003882, -0.048116, 1.051998}},
	"deutan": {{0.367322, 0.860646, -0.227968}, {0.280085, 0.672501, 0.047413}, {-0.011820, 0.042940, 0.968881}},
	"tritan": {{1.255528, -0.076749, -0.178779}, {-0.078411, 0.930809, 0.147602}, {0.004733, 0.691367, 0.303900}},
}

// linear converts an sRGB channel (0–255) to linear light (IEC 61966-2-1).
func linear(c uint8) float64 {
	v := float64(c) / 255
	if v <= 0.04045 {
		return v / 12.92
	}
	return math.Pow((v+0.055)/1.055, 2.4)
}

// lab converts linear RGB to CIELAB (D65 white; sRGB primaries).
func lab(r, g, b float64) [3]float64 {
	x := 0.4124*r + 0.3576*g + 0.1805*b
	y := 0.2126*r + 0.7152*g + 0.0722*b
	z := 0.0193*r + 0.1192*g + 0.9505*b
	f := func(t float64) float64 {
		if t > 0.008856 {
			return math.Cbrt(t)
		}
		return 7.787*t + 16.0/116
	}
	fx, fy, fz := f(x/0.95047), f(y/1.0), f(z/1.08883)
	return [3]float64{116*fy - 16, 500 * (fx - fy), 200 * (fy - fz)}
}

func simulate(c color.RGBA, m [3][3]float64) [3]float64 {
	in := [3]float64{linear(c.R), linear(c.G), linear(c.B)}
	var out [3]float64
	for i := range 3 {
		for j := range 3 {
			out[i] += m[i][j] * in[j]
		}
		out[i] = math.Min(1, math.Max(0, out[i]))
	}
	return lab(out[0], out[1], out[2])
}

// minPaletteDeltaE is the smallest CIE 1976 colour difference the figures
// allow between any two series. Our own threshold: far above the
// just-noticeable difference (about 2.3) because markers are small; the
// palette was chosen to clear it under every simulated deficiency.
const minPaletteDeltaE = 20

// TestPaletteColourBlindSafe simulates protan, deutan and tritan vision
// and requires every pair of series colours (observed and candidates) to
// stay at least minPaletteDeltaE apart.
func TestPaletteColourBlindSafe(t *testing.T) {
	t.Parallel()
	cols := append([]color.RGBA{observedColor}, candidateColors...)
	for name, m := range cvd {
		for i := range cols {
			for j := i + 1; j < len(cols); j++ {
				a, b := simulate(cols[i], m), simulate(cols[j], m)
				d := math.Sqrt((a[0]-b[0])*(a[0]-b[0]) + (a[1]-b[1])*(a[1]-b[1]) + (a[2]-b[2])*(a[2]-b[2]))
				if d < minPaletteDeltaE {
					t.Errorf("%s: %s and %s are ΔE %.1f apart, want ≥ %d", name, hex(cols[i]), hex(cols[j]), d, minPaletteDeltaE)
				}
			}
		}
	}
}

// TestLabReference checks the conversion on sRGB white and mid-grey:
// white is L* 100, a* = b* = 0; #777777 is L* 50.0 (both standard values
// of the CIELAB definition, CIE 15:2004, from memory).
func TestLabReference(t *testing.T) {
	t.Parallel()
	w := lab(linear(255), linear(255), linear(255))
	if math.Abs(w[0]-100) > 0.01 || math.Abs(w[1]) > 0.05 || math.Abs(w[2]) > 0.05 {
		t.Errorf("white: got %v, want (100, 0, 0)", w)
	}
	g := lab(linear(0x77), linear(0x77), linear(0x77))
	if math.Abs(g[0]-50.0) > 0.3 {
		t.Errorf("#777777: L* %.2f, want 50.0", g[0])
	}
}

// TestSeriesDistinctBeyondColour: each candidate also has its own marker
// shape and line dash, so the figures never rely on colour alone.
func TestSeriesDistinctBeyondColour(t *testing.T) {
	t.Parallel()
	seen := map[string]bool{}
	for i := range candidateColors {
		s := candidateStyle(i)
		key := fmt.Sprintf("%T %v", s.shape, s.dash)
		if seen[key] {
			t.Errorf("candidate %d repeats shape and dash %s", i+1, key)
		}
		seen[key] = true
	}
}

func hex(c color.RGBA) string { return fmt.Sprintf("#%02X%02X%02X", c.R, c.G, c.B) }
