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
	"regexp"
	"strings"
	"testing"
	"time"
)

const chromium = "/usr/bin/chromium"

// chromiumArgs run a headless browser that touches no network and no
// profile of the machine's user.
func chromiumArgs(profile string, extra ...string) []string {
	return append([]string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir=" + profile}, extra...)
}

// TestBrowserRender renders the report in a real browser (skipped when
// chromium is not installed): the screenshot must not be blank, the DOM
// must hold both figures, and the figures' own colours must show up in
// the pixels (so the inline SVG was drawn, not just parsed). Set
// BASIN_SCREENSHOT=path to keep the PNG.
func TestBrowserRender(t *testing.T) {
	if _, err := os.Stat(chromium); err != nil {
		t.Skip("no " + chromium)
	}
	if testing.Short() {
		t.Skip("starts a browser")
	}
	dir := t.TempDir()
	htmlPath := filepath.Join(dir, "report.html")
	if err := os.WriteFile(htmlPath, []byte(renderPage(t, fixture(mustCert(fixtureCertJSON), nil))), 0o644); err != nil {
		t.Fatal(err)
	}
	url := "file://" + htmlPath
	ctx, cancel := context.WithTimeout(context.Background(), 90*time.Second)
	defer cancel()

	dom, err := exec.CommandContext(ctx, chromium, chromiumArgs(filepath.Join(dir, "p1"), "--dump-dom", url)...).Output()
	if err != nil {
		t.Fatalf("chromium --dump-dom: %v", err)
	}
	if n := strings.Count(string(dom), `<svg role="img"`); n != 2 {
		t.Errorf("browser DOM holds %d figures, want 2", n)
	}
	if !strings.Contains(string(dom), "Read this first") {
		t.Error("browser DOM lacks the caution")
	}

	img := screenshot(ctx, t, dir, "p2", htmlPath, os.Getenv("BASIN_SCREENSHOT"))
	// Control: the same page with the figures cut out.
	page := renderPage(t, fixture(mustCert(fixtureCertJSON), nil))
	cut := regexp.MustCompile(`(?s)<svg role="img".*?</svg>`).ReplaceAllString(page, "")
	bare := filepath.Join(dir, "bare.html")
	if err := os.WriteFile(bare, []byte(cut), 0o644); err != nil {
		t.Fatal(err)
	}
	control := screenshot(ctx, t, dir, "p3", bare, "")
	// Not blank: the luminance varies (a blank page has variance ~0).
	var s, s2, n float64
	for y := img.Bounds().Min.Y; y < img.Bounds().Max.Y; y += 2 {
		for x := img.Bounds().Min.X; x < img.Bounds().Max.X; x += 2 {
			l := lum(img.At(x, y))
			s += l
			s2 += l * l
			n++
		}
	}
	if v := s2/n - (s/n)*(s/n); v < 100 {
		t.Errorf("screenshot luminance variance %.1f: blank page?", v)
	}
	// The figures drew: pixels of the boundary colour and of the held-out
	// runs' colour, which only the SVG figures (and the small key
	// swatches) use. A few hundred pixels mean whole curves, not swatches.
	for name, c := range map[string]color.RGBA{"region boundary": inkRegion, "held-out runs": inkHeldout} {
		k, k0 := countNear(img, c, 40), countNear(control, c, 40)
		if k < 300 || k < 3*k0 {
			t.Errorf("%s colour %s: %d pixels (%d without the figures): the figure did not render", name, hex(c), k, k0)
		}
		t.Logf("%s colour: %d pixels, %d without the figures", name, k, k0)
	}
}

// screenshot renders path at 1280x2000 and decodes the PNG (kept at keep
// when keep is not empty).
func screenshot(ctx context.Context, t *testing.T, dir, profile, path, keep string) image.Image {
	t.Helper()
	shot := filepath.Join(dir, profile+".png")
	cmd := exec.CommandContext(ctx, chromium, chromiumArgs(filepath.Join(dir, profile), "--screenshot="+shot,
		"--window-size=1280,2000", "--hide-scrollbars", "file://"+path)...)
	cmd.Dir = dir
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium --screenshot: %v\n%s", err, out)
	}
	b, err := os.ReadFile(shot)
	if err != nil {
		t.Fatal(err)
	}
	if keep != "" {
		os.WriteFile(keep, b, 0o644)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if sz := img.Bounds().Size(); sz.X < 1000 || sz.Y < 1500 {
		t.Fatalf("screenshot %v", sz)
	}
	return img
}

func lum(c color.Color) float64 {
	r, g, b, _ := c.RGBA()
	return (0.2126*float64(r) + 0.7152*float64(g) + 0.0722*float64(b)) / 257
}

// countNear counts pixels within tol (per channel, 0..255) of c.
func countNear(img image.Image, c color.RGBA, tol int) int {
	k := 0
	for y := img.Bounds().Min.Y; y < img.Bounds().Max.Y; y++ {
		for x := img.Bounds().Min.X; x < img.Bounds().Max.X; x++ {
			r, g, b, _ := img.At(x, y).RGBA()
			if abs(int(r>>8)-int(c.R)) <= tol && abs(int(g>>8)-int(c.G)) <= tol && abs(int(b>>8)-int(c.B)) <= tol {
				k++
			}
		}
	}
	return k
}

func abs(a int) int {
	if a < 0 {
		return -a
	}
	return a
}
