package plot

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// RGB is an sRGB colour with components in [0, 1].
type RGB struct{ R, G, B float64 }

// ParseHex reads "#rrggbb".
func ParseHex(s string) (RGB, error) {
	s = strings.TrimPrefix(s, "#")
	if len(s) != 6 {
		return RGB{}, fmt.Errorf("plot: colour %q is not #rrggbb", s)
	}
	v, err := strconv.ParseUint(s, 16, 32)
	if err != nil {
		return RGB{}, fmt.Errorf("plot: colour %q is not #rrggbb", s)
	}
	return RGB{float64(v>>16&0xff) / 255, float64(v>>8&0xff) / 255, float64(v&0xff) / 255}, nil
}

// mustHex is ParseHex for the package's own constants.
func mustHex(s string) RGB {
	c, err := ParseHex(s)
	if err != nil {
		panic(err)
	}
	return c
}

// Hex writes the colour as "#rrggbb".
func (c RGB) Hex() string {
	r, g, b := c.Bytes()
	return fmt.Sprintf("#%02x%02x%02x", r, g, b)
}

// Bytes returns the colour as 8-bit components, rounded and clamped.
func (c RGB) Bytes() (r, g, b uint8) {
	to := func(v float64) uint8 {
		return uint8(math.Round(max(0, min(1, v)) * 255))
	}
	return to(c.R), to(c.G), to(c.B)
}

// linear converts an sRGB component to linear light (IEC 61966-2-1).
func linear(v float64) float64 {
	if v <= 0.04045 {
		return v / 12.92
	}
	return math.Pow((v+0.055)/1.055, 2.4)
}

// gamma converts a linear-light component back to sRGB.
func gamma(v float64) float64 {
	if v <= 0.0031308 {
		return 12.92 * v
	}
	return 1.055*math.Pow(v, 1/2.4) - 0.055
}

// Luminance returns the relative luminance of the colour as defined by
// WCAG 2: 0.2126 R + 0.7152 G + 0.0722 B in linear light.
func (c RGB) Luminance() float64 {
	return 0.2126*linear(c.R) + 0.7152*linear(c.G) + 0.0722*linear(c.B)
}

// Contrast returns the WCAG 2 contrast ratio (L1 + 0.05) / (L2 + 0.05) of
// two colours, at least 1.
func Contrast(a, b RGB) float64 {
	la, lb := a.Luminance(), b.Luminance()
	if la < lb {
		la, lb = lb, la
	}
	return (la + 0.05) / (lb + 0.05)
}

// OKLab is a colour in Ottosson's OKLab space (2020): L is perceived
// lightness in [0, 1], a and b the opponent axes.
type OKLab struct{ L, A, B float64 }

// ToOKLab converts an sRGB colour to OKLab.
func (c RGB) ToOKLab() OKLab {
	r, g, b := linear(c.R), linear(c.G), linear(c.B)
	l := math.Cbrt(0.4122214708*r + 0.5363325363*g + 0.0514459929*b)
	m := math.Cbrt(0.2119034982*r + 0.6806995451*g + 0.1073969566*b)
	s := math.Cbrt(0.0883024619*r + 0.2817188376*g + 0.6299787005*b)
	return OKLab{
		L: 0.2104542553*l + 0.7936177850*m - 0.0040720468*s,
		A: 1.9779984951*l - 2.4285922050*m + 0.4505937099*s,
		B: 0.0259040371*l + 0.7827717662*m - 0.8086757660*s,
	}
}

// ToRGB converts an OKLab colour back to sRGB (unclamped).
func (c OKLab) ToRGB() RGB {
	l := c.L + 0.3963377774*c.A + 0.2158037573*c.B
	m := c.L - 0.1055613458*c.A - 0.0638541728*c.B
	s := c.L - 0.0894841775*c.A - 1.2914855480*c.B
	l, m, s = l*l*l, m*m*m, s*s*s
	return RGB{
		R: gamma(+4.0767416621*l - 3.3077115913*m + 0.2309699292*s),
		G: gamma(-1.2684380046*l + 2.6097574011*m - 0.3413193965*s),
		B: gamma(-0.0041960863*l - 0.7034186147*m + 1.7076147010*s),
	}
}
