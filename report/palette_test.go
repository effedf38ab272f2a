package report

import (
	"image/color"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// okabeIto is the palette of Okabe & Ito (2008), "Color Universal Design",
// in the RGB values printed by Wong (2011), "Points of view: Color
// blindness", Nature Methods 8:441, Figure 2.
var okabeIto = map[string]color.NRGBA{
	"black":          {0, 0, 0, 255},
	"orange":         {230, 159, 0, 255},
	"sky blue":       {86, 180, 233, 255},
	"bluish green":   {0, 158, 115, 255},
	"yellow":         {240, 228, 66, 255},
	"blue":           {0, 114, 178, 255},
	"vermillion":     {213, 94, 0, 255},
	"reddish purple": {204, 121, 167, 255},
}

// luminance is the relative luminance of WCAG 2.1 (definition "relative
// luminance", sRGB with the 0.03928 threshold the recommendation gives).
func luminance(c color.NRGBA) float64 {
	lin := func(v uint8) float64 {
		s := float64(v) / 255
		if s <= 0.03928 {
			return s / 12.92
		}
		return math.Pow((s+0.055)/1.055, 2.4)
	}
	return 0.2126*lin(c.R) + 0.7152*lin(c.G) + 0.0722*lin(c.B)
}

// contrast is WCAG 2.1's contrast ratio (L1 + 0.05) / (L2 + 0.05).
func contrast(a, b color.NRGBA) float64 {
	la, lb := luminance(a), luminance(b)
	return (max(la, lb) + 0.05) / (min(la, lb) + 0.05)
}

func hexColour(t *testing.T, s string) color.NRGBA {
	t.Helper()
	s = strings.TrimPrefix(s, "#")
	v, err := strconv.ParseUint(s, 16, 32)
	if err != nil || len(s) != 6 {
		t.Fatalf("bad colour %q", s)
	}
	return color.NRGBA{uint8(v >> 16), uint8(v >> 8), uint8(v), 255}
}

func TestContrastFormula(t *testing.T) {
	white := color.NRGBA{255, 255, 255, 255}
	// Black on white is 21:1, the top of WCAG's scale by its definition.
	if got := contrast(color.NRGBA{0, 0, 0, 255}, white); math.Abs(got-21) > 1e-9 {
		t.Errorf("black on white: %v, want 21", got)
	}
	// #767676 on white is 4.54:1, the lightest grey that meets 4.5:1 (from
	// memory; WebAIM's contrast checker shows 4.54:1).
	if got := contrast(color.NRGBA{0x76, 0x76, 0x76, 255}, white); math.Abs(got-4.54) > 0.005 {
		t.Errorf("#767676 on white: %.3f, want 4.54", got)
	}
}

// cssVars reads the custom properties of the shared style sheet.
func cssVars(t *testing.T) map[string]color.NRGBA {
	re := regexp.MustCompile(`--([a-z]+):\s*(#[0-9a-fA-F]{6})`)
	m := map[string]color.NRGBA{}
	for _, s := range re.FindAllStringSubmatch(styleSource, -1) {
		m[s[1]] = hexColour(t, s[2])
	}
	for _, k := range []string{"ink", "muted", "paper", "tint", "fail", "warn", "pass", "blue"} {
		if _, ok := m[k]; !ok {
			t.Fatalf("style sheet has no --%s", k)
		}
	}
	return m
}

// TestTextContrast: body text meets WCAG 2.1 success criterion 1.4.3
// (4.5:1) on every background the style sheet puts it on.
func TestTextContrast(t *testing.T) {
	v := cssVars(t)
	backgrounds := map[string]color.NRGBA{"paper": v["paper"], "tint": v["tint"]}
	// The tinted boxes: caution, status labels, the failed row.
	for _, s := range []string{"#fff8e1", "#fbe3d6", "#fdf1d3", "#ddf2ec", "#fdf3ee"} {
		if !strings.Contains(styleSource, s) {
			t.Fatalf("style sheet no longer uses %s; update the test", s)
		}
		backgrounds[s] = hexColour(t, s)
	}
	for fg, c := range map[string]color.NRGBA{"ink": v["ink"], "muted": v["muted"]} {
		for bg, b := range backgrounds {
			if r := contrast(c, b); r < 4.5 {
				t.Errorf("--%s on %s: contrast %.2f, below 4.5:1", fg, bg, r)
			}
		}
	}
}

// TestPalette: every hue the brief uses is an Okabe–Ito colour; the lines
// and markers that carry meaning meet WCAG 2.1 criterion 1.4.11 (3:1
// against white, the plot's background), orange only with its black
// outline; and the three markers stay apart in greyscale (luminance at
// least 0.1 apart, common practice, no source) besides their shapes.
func TestPalette(t *testing.T) {
	inPalette := func(c color.NRGBA) bool {
		c.A = 255
		for _, p := range okabeIto {
			if p == c {
				return true
			}
		}
		return false
	}
	v := cssVars(t)
	for _, k := range []string{"fail", "warn", "pass", "blue"} {
		if !inPalette(v[k]) {
			t.Errorf("--%s %v is not an Okabe–Ito colour", k, v[k])
		}
	}
	for name, c := range map[string]color.NRGBA{"orange": orange, "blue": blue, "vermillion": vermillion, "band": bandFill} {
		if !inPalette(c) {
			t.Errorf("chart colour %s %v is not an Okabe–Ito colour", name, c)
		}
	}
	for name, c := range map[string]color.NRGBA{"median and gains (blue)": blue, "approved (vermillion)": vermillion,
		"current (black)": black, "seen-range hatch": seenHatch, "loss hatch": lossHatch} {
		if r := contrast(c, white); r < 3 {
			t.Errorf("%s: contrast %.2f against white, below 3:1", name, r)
		}
	}
	marks := []color.NRGBA{currentGlyph.Color.(color.NRGBA), proposedGlyph.Color.(color.NRGBA), approvedGlyph.Color.(color.NRGBA)}
	for i := range marks {
		for j := i + 1; j < len(marks); j++ {
			if d := math.Abs(luminance(marks[i]) - luminance(marks[j])); d < 0.1 {
				t.Errorf("markers %v and %v are %.3f apart in luminance", marks[i], marks[j], d)
			}
		}
	}
	if currentGlyph.Shape == proposedGlyph.Shape || proposedGlyph.Shape == approvedGlyph.Shape || currentGlyph.Shape == approvedGlyph.Shape {
		t.Error("two markers share a shape")
	}
}
