package plot

import "math"

// Colormap maps [0, 1] to colours by interpolating between anchors in OKLab,
// so equal steps look like equal changes.
type Colormap struct {
	anchors []OKLab
}

// NewColormap builds a colour map through the given "#rrggbb" anchors,
// evenly spaced on [0, 1].
func NewColormap(hex ...string) (Colormap, error) {
	cm := Colormap{anchors: make([]OKLab, len(hex))}
	for i, h := range hex {
		c, err := ParseHex(h)
		if err != nil {
			return Colormap{}, err
		}
		cm.anchors[i] = c.ToOKLab()
	}
	return cm, nil
}

// At returns the colour at t, clamped to [0, 1]; NaN gives the first anchor.
func (cm Colormap) At(t float64) RGB {
	n := len(cm.anchors)
	switch {
	case n == 0:
		return RGB{1, 1, 1}
	case n == 1 || !(t > 0):
		return cm.anchors[0].ToRGB()
	case t >= 1:
		return cm.anchors[n-1].ToRGB()
	}
	pos := t * float64(n-1)
	k := int(math.Floor(pos))
	f := pos - float64(k)
	a, b := cm.anchors[k], cm.anchors[k+1]
	return OKLab{
		L: a.L + f*(b.L-a.L),
		A: a.A + f*(b.A-a.A),
		B: a.B + f*(b.B-a.B),
	}.ToRGB()
}

// Density is bellcheck's heat-map colour map: from paper white to a cool
// slate grey of middle lightness, nearly neutral in hue so that the methods'
// coloured lines and the dark exact contours stay legible on top of it.
var Density = func() Colormap {
	cm, err := NewColormap("#fbfbf9", "#e2e6ea", "#c0c9d2", "#97a5b3", "#6a7b8e")
	if err != nil {
		panic(err)
	}
	return cm
}()

// Table is a lookup table of n colours of a colour map, as RGBA bytes, for
// filling pixels quickly.
func (cm Colormap) Table(n int) [][4]uint8 {
	t := make([][4]uint8, n)
	for i := range t {
		r, g, b := cm.At(float64(i) / float64(n-1)).Bytes()
		t[i] = [4]uint8{r, g, b, 255}
	}
	return t
}
