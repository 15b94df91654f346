package plot

import (
	"math"
	"testing"
)

func TestContrastWCAG(t *testing.T) {
	// WCAG 2 defines the contrast of black on white as 21:1 and of a colour
	// with itself as 1:1; #767676 on white is 4.54:1 (the commonly quoted
	// lightest grey that passes 4.5:1; from memory).
	white, black := RGB{1, 1, 1}, RGB{0, 0, 0}
	if c := Contrast(black, white); math.Abs(c-21) > 1e-9 {
		t.Errorf("black on white %g, want 21", c)
	}
	if c := Contrast(white, white); c != 1 {
		t.Errorf("white on white %g", c)
	}
	if c := Contrast(mustHex("#767676"), white); math.Abs(c-4.54) > 0.01 {
		t.Errorf("#767676 on white %g, want 4.54", c)
	}
}

func TestOKLabReference(t *testing.T) {
	// White is L = 1, a = b = 0 and black L = 0 by construction of OKLab
	// (Ottosson 2020); sRGB red is about (0.628, 0.225, 0.126) in his
	// published table (from memory).
	w := RGB{1, 1, 1}.ToOKLab()
	if math.Abs(w.L-1) > 1e-4 || math.Abs(w.A) > 1e-4 || math.Abs(w.B) > 1e-4 {
		t.Errorf("white = %+v", w)
	}
	r := RGB{1, 0, 0}.ToOKLab()
	if math.Abs(r.L-0.628) > 2e-3 || math.Abs(r.A-0.225) > 2e-3 || math.Abs(r.B-0.126) > 2e-3 {
		t.Errorf("red = %+v", r)
	}
	// Round trip.
	for _, h := range []string{"#1a3886", "#c36121", "#9aa7b4", "#fbfbf9"} {
		c := mustHex(h)
		if back := c.ToOKLab().ToRGB().Hex(); back != h {
			t.Errorf("round trip %s -> %s", h, back)
		}
	}
}

func TestDensityColormapIsMonotoneInLightness(t *testing.T) {
	prev := 2.0
	for i := 0; i <= 100; i++ {
		l := Density.At(float64(i) / 100).ToOKLab().L
		if l >= prev {
			t.Fatalf("lightness not decreasing at %d: %g >= %g", i, l, prev)
		}
		prev = l
	}
	if got := Density.At(0).Hex(); got != "#fbfbf9" {
		t.Errorf("At(0) = %s", got)
	}
	if got := Density.At(math.NaN()).Hex(); got != "#fbfbf9" {
		t.Errorf("At(NaN) = %s", got)
	}
}

func TestPaletteIsDistinctWithoutColour(t *testing.T) {
	white := RGB{1, 1, 1}
	dashes := map[string]Method{}
	for _, m := range Methods {
		s := StyleOf(m)
		c, err := ParseHex(s.Colour)
		if err != nil {
			t.Fatal(err)
		}
		// WCAG 2.1 success criterion 1.4.11: 3:1 for graphical objects.
		if k := Contrast(c, white); k < 3 {
			t.Errorf("%s: contrast %g on white", s.Name, k)
		}
		// On the heat map where the innermost contours run: for a Gaussian
		// the region holding 39.3 % of the mass ends where the density is
		// e^(-1/2) of its peak (chi-square with 2 degrees of freedom).
		if k := Contrast(c, Density.At(math.Exp(-0.5))); k < 2 {
			t.Errorf("%s: contrast %g on the heat map at the 39 %% contour", s.Name, k)
		}
		if other, dup := dashes[s.Dash]; dup {
			t.Errorf("%s and %s share dash %q", s.Name, other, s.Dash)
		}
		dashes[s.Dash] = m
		for _, m2 := range Methods {
			if m2 <= m {
				continue
			}
			c2 := mustHex(StyleOf(m2).Colour)
			if d := math.Abs(c.ToOKLab().L - c2.ToOKLab().L); d < 0.07 {
				t.Errorf("%s and %s differ in lightness by only %.3f", s.Name, StyleOf(m2).Name, d)
			}
		}
	}
}
