package chart

import "strings"

// The palette. Hues were picked for this project: a muted blue and a warm
// ochre form the main pair (they stay apart for the common red-green colour
// vision deficiencies and in greyscale, where they differ in lightness),
// followed by a blue-green, a dusty rose, a light sky blue, a sand and a
// neutral grey. Charts also tell kinds apart by shape or dash, never by
// colour alone.
const (
	ColorBlue  = "#3D6A98" // deep muted blue
	ColorOchre = "#C7832F" // warm ochre
	ColorTeal  = "#2F8F86" // blue-green
	ColorRose  = "#A8546E" // dusty rose
	ColorSky   = "#86B5DB" // light sky blue
	ColorSand  = "#CDB46A" // sand
	ColorGrey  = "#727880" // neutral grey

	colorInk     = "#2B3037" // text
	colorMuted   = "#5F6670" // secondary text, axis labels
	colorAxis    = "#9AA1A9" // axis lines
	colorGrid    = "#E3E7EB" // grid lines
	colorPsyLine = "#A9B8C6" // psychrometric RH and enthalpy lines
	colorSat     = "#33485E" // saturation curve
	colorTarget  = ColorRose // humidity target
)

// Series colours in order of use when a series names none.
var seriesColors = [...]string{ColorBlue, ColorOchre, ColorTeal, ColorRose, ColorSky, ColorSand, ColorGrey}

// autoColor returns the i-th palette colour.
func autoColor(i int) string { return seriesColors[i%len(seriesColors)] }

// safeColor returns c when it looks like a CSS colour value (#hex, a
// keyword, rgb()/hsl() with plain numbers) and fallback otherwise, so that a
// configured colour cannot carry anything else into the page.
func safeColor(c, fallback string) string {
	c = strings.TrimSpace(c)
	if c == "" || len(c) > 40 {
		return fallback
	}
	if c[0] == '#' {
		n := len(c) - 1
		if n != 3 && n != 4 && n != 6 && n != 8 {
			return fallback
		}
		for i := 1; i < len(c); i++ {
			if !isHex(c[i]) {
				return fallback
			}
		}
		return c
	}
	letters := true
	for i := 0; i < len(c); i++ {
		if !isLetter(c[i]) {
			letters = false
			break
		}
	}
	if letters {
		return c
	}
	for _, fn := range []string{"rgb(", "rgba(", "hsl(", "hsla("} {
		if strings.HasPrefix(c, fn) && strings.HasSuffix(c, ")") {
			for i := len(fn); i < len(c)-1; i++ {
				ch := c[i]
				if !(ch >= '0' && ch <= '9') && !strings.ContainsRune(" ,.%/", rune(ch)) && ch != 'd' && ch != 'e' && ch != 'g' {
					return fallback
				}
			}
			return c
		}
	}
	return fallback
}

func isHex(c byte) bool {
	return (c >= '0' && c <= '9') || (c >= 'a' && c <= 'f') || (c >= 'A' && c <= 'F')
}

func isLetter(c byte) bool { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') }

// safeClass keeps the characters of CSS class names (letters, digits, '-',
// '_') and single spaces between names; anything else is dropped.
func safeClass(c string) string {
	var b strings.Builder
	space := false
	for i := 0; i < len(c); i++ {
		ch := c[i]
		switch {
		case isLetter(ch) || (ch >= '0' && ch <= '9') || ch == '-' || ch == '_':
			if space && b.Len() > 0 {
				b.WriteByte(' ')
			}
			space = false
			b.WriteByte(ch)
		case ch == ' ' || ch == '\t':
			space = true
		}
	}
	return b.String()
}

// classes joins a fixed class with a sanitised user class.
func classes(fixed, user string) string {
	if u := safeClass(user); u != "" {
		return fixed + " " + u
	}
	return fixed
}
