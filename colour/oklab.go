package colour

import (
	"image/color"
	"math"
)

// lab is a colour in OKLab (L in [0, 1]).
type lab struct{ L, A, B float64 }

// srgbToLinear is the sRGB transfer function inverse (IEC 61966-2-1).
func srgbToLinear(c float64) float64 {
	if c <= 0.04045 {
		return c / 12.92
	}
	return math.Pow((c+0.055)/1.055, 2.4)
}

func linearToSRGB(c float64) float64 {
	if c <= 0.0031308 {
		return 12.92 * c
	}
	return 1.055*math.Pow(c, 1/2.4) - 0.055
}

// toOKLab converts sRGB to OKLab with the matrices of Ottosson (2020), "A
// perceptual color space for image processing".
func toOKLab(c color.NRGBA) lab {
	r := srgbToLinear(float64(c.R) / 255)
	g := srgbToLinear(float64(c.G) / 255)
	b := srgbToLinear(float64(c.B) / 255)
	l := math.Cbrt(0.4122214708*r + 0.5363325363*g + 0.0514459929*b)
	m := math.Cbrt(0.2119034982*r + 0.6806995451*g + 0.1073969566*b)
	s := math.Cbrt(0.0883024619*r + 0.2817188376*g + 0.6299787005*b)
	return lab{
		L: 0.2104542553*l + 0.7936177850*m - 0.0040720468*s,
		A: 1.9779984951*l - 2.4285922050*m + 0.4505937099*s,
		B: 0.0259040371*l + 0.7827717662*m - 0.8086757660*s,
	}
}

// fromOKLab is the inverse of toOKLab (Ottosson 2020), clamped to the sRGB gamut.
func fromOKLab(c lab) color.NRGBA {
	l := c.L + 0.3963377774*c.A + 0.2158037573*c.B
	m := c.L - 0.1055613458*c.A - 0.0638541728*c.B
	s := c.L - 0.0894841775*c.A - 1.2914855480*c.B
	l, m, s = l*l*l, m*m*m, s*s*s
	r := 4.0767416621*l - 3.3077115913*m + 0.2309699292*s
	g := -1.2684380046*l + 2.6097574011*m - 0.3413193965*s
	b := -0.0041960863*l - 0.7034186147*m + 1.7076147010*s
	to8 := func(v float64) uint8 {
		v = linearToSRGB(math.Max(0, math.Min(1, v)))
		return uint8(math.Round(v * 255))
	}
	return color.NRGBA{to8(r), to8(g), to8(b), 255}
}
