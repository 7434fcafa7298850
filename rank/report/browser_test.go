package report

import (
	"bytes"
	"context"
	"image"
	"image/color"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"
	"time"
)

// Browser check of the HTML report (issue 13): the demo's page rendered by
// a real browser, headless Chromium, to a PNG screenshot and a PDF print.
// It runs only when NLENS_CHROMIUM names the browser's executable, as
// .ci/run does after installing Debian's chromium package; plain `go test`
// skips it.

// Screen sizes of the screenshots, in CSS pixels: a phone held upright
// (412 px wide, a common Android phone width) and a desktop window. The
// heights hold the whole demo report, figures included, at that width.
var browserScreens = []struct {
	name          string
	width, height int
}{
	{"phone", 412, 16000},
	{"desktop", 1100, 9000},
}

// chromiumArgs are the flags every run takes: headless, no sandbox (CI runs
// as root in a container), no GPU, and none of the browser's own network
// traffic (a closed network refuses it, and the page must load nothing).
func chromiumArgs(userDir string) []string {
	return []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--disable-extensions", "--hide-scrollbars", "--user-data-dir=" + userDir}
}

func runChromium(t *testing.T, bin string, args ...string) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 2*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, args...)
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	if err := cmd.Run(); err != nil {
		t.Fatalf("%s: %v\n%s", bin, err, out.String())
	}
}

// The thresholds below sit far from both sides: a blank page is one
// colour with nothing inked, while the demo's page gave 9578 colours,
// 20.1 % inked and 472 amber pixels at phone width, 11608, 23.0 % and
// 2241 on a desktop, and a 351 kB PDF of 10 pages (Chromium 148, Debian
// 12, December 2026; a pixel counts as amber within 24 of each channel,
// for anti-aliased line edges).

// TestHTMLInChromium renders the demo's HTML report in headless Chromium.
// The screenshots must not be blank: more than 5 % of the pixels differ
// from the page's background, they hold many colours, and the colour of
// the second leading explanation (candidateColors[1], amber, which only
// the figures use: the style sheet has no amber) covers at least 200
// pixels, so the inline SVG figures were drawn. The PDF print must be a PDF of some size.
func TestHTMLInChromium(t *testing.T) {
	bin := os.Getenv("NLENS_CHROMIUM")
	if bin == "" {
		t.Skip("NLENS_CHROMIUM is not set (.ci/run sets it to headless Chromium)")
	}
	dir := t.TempDir()
	page := filepath.Join(dir, "demo.html")
	// Written as `nlens demo --format html` writes it: through the
	// terminal's escaping writer.
	var b bytes.Buffer
	if err := WriteExplain(EscapeWriter(&b), demoResult(t), testKB(t), FormatHTML); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(page, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	url := "file://" + page
	for _, s := range browserScreens {
		shot := filepath.Join(dir, s.name+".png")
		runChromium(t, bin, append(chromiumArgs(filepath.Join(dir, "profile-"+s.name)),
			"--window-size="+strconv.Itoa(s.width)+","+strconv.Itoa(s.height), "--screenshot="+shot, url)...)
		img := readPNG(t, shot)
		st := pixelStats(img, color.RGBA{0xfd, 0xfd, 0xfb, 0xff}, candidateColors[1])
		info, _ := os.Stat(shot)
		t.Logf("%s screenshot: %d×%d px, %d bytes, %d colours, %.1f %% not background, %d pixels of the figures' amber",
			s.name, img.Bounds().Dx(), img.Bounds().Dy(), info.Size(), st.colours, 100*st.inked, st.marked)
		// 5 % inked, 64 colours, 200 amber pixels and a 50 000-byte PDF
		// are floors for "something was drawn" (engineering choices, not
		// measured values).
		if st.inked < 0.05 || st.colours < 64 {
			t.Errorf("%s screenshot is (nearly) blank: %.1f %% of pixels differ from the background, %d colours", s.name, 100*st.inked, st.colours)
		}
		if st.marked < 200 {
			t.Errorf("%s screenshot has %d pixels of the second explanation's colour: the inline figures were not drawn", s.name, st.marked)
		}
	}
	pdf := filepath.Join(dir, "demo.pdf")
	runChromium(t, bin, append(chromiumArgs(filepath.Join(dir, "profile-pdf")), "--no-pdf-header-footer", "--print-to-pdf="+pdf, url)...)
	data, err := os.ReadFile(pdf)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("PDF print: %d bytes, %d pages", len(data), bytes.Count(data, []byte("/Type /Page\n"))+bytes.Count(data, []byte("/Type /Page/"))+bytes.Count(data, []byte("/Type /Page>")))
	if !bytes.HasPrefix(data, []byte("%PDF-")) || len(data) < 50_000 {
		t.Errorf("PDF print is not a PDF of some size: %d bytes starting %q", len(data), data[:min(len(data), 8)])
	}
}

func readPNG(t *testing.T, path string) image.Image {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return img
}

type pngStats struct {
	colours int
	inked   float64 // share of pixels not the background
	marked  int     // pixels within a small distance of the mark colour
}

// pixelStats counts the distinct colours of img, the share of its pixels
// that are not bg, and the pixels within 24 per channel of mark
// (anti-aliased edges of a line are lighter than its core).
func pixelStats(img image.Image, bg, mark color.RGBA) pngStats {
	seen := map[color.RGBA]bool{}
	b := img.Bounds()
	var inked, marked int
	near := func(a, b uint8) bool { return int(a)-int(b) < 24 && int(b)-int(a) < 24 }
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			c := color.RGBAModel.Convert(img.At(x, y)).(color.RGBA)
			seen[c] = true
			if c != bg {
				inked++
			}
			if near(c.R, mark.R) && near(c.G, mark.G) && near(c.B, mark.B) {
				marked++
			}
		}
	}
	return pngStats{colours: len(seen), inked: float64(inked) / float64(b.Dx()*b.Dy()), marked: marked}
}
