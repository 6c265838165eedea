package static

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// cssRules reads the top-level rules of a stylesheet (rules inside @media
// blocks are left out: they are print and narrow-screen variants) as
// selector → property → value; a later declaration wins, as in the browser
// for equal selectors.
func cssRules(t *testing.T, css string) map[string]map[string]string {
	t.Helper()
	for {
		i := strings.Index(css, "/*")
		if i < 0 {
			break
		}
		j := strings.Index(css[i:], "*/")
		if j < 0 {
			t.Fatal("unterminated comment in the stylesheet")
		}
		css = css[:i] + css[i+j+2:]
	}
	rules := map[string]map[string]string{}
	for len(strings.TrimSpace(css)) > 0 {
		open := strings.IndexByte(css, '{')
		if open < 0 {
			break
		}
		sel := strings.TrimSpace(css[:open])
		if strings.HasPrefix(sel, "@") { // skip the block with its nested rules
			depth, k := 0, open
			for ; k < len(css); k++ {
				if css[k] == '{' {
					depth++
				} else if css[k] == '}' {
					depth--
					if depth == 0 {
						break
					}
				}
			}
			css = css[k+1:]
			continue
		}
		end := strings.IndexByte(css[open:], '}')
		if end < 0 {
			t.Fatalf("rule %q has no closing brace", sel)
		}
		body := css[open+1 : open+end]
		css = css[open+end+1:]
		if rules[sel] == nil {
			rules[sel] = map[string]string{}
		}
		for _, d := range strings.Split(body, ";") {
			k, v, ok := strings.Cut(d, ":")
			if ok {
				rules[sel][strings.TrimSpace(k)] = strings.TrimSpace(v)
			}
		}
	}
	return rules
}

// colour resolves a CSS colour value (#rgb, #rrggbb or var(--name), the
// first of a shorthand) to RGB in 0..1.
func colour(t *testing.T, rules map[string]map[string]string, v string) [3]float64 {
	t.Helper()
	v = strings.Fields(v)[0]
	if strings.HasPrefix(v, "var(") {
		name := strings.TrimSuffix(strings.TrimPrefix(v, "var("), ")")
		def, ok := rules[":root"][name]
		if !ok {
			t.Fatalf("%s is not defined in :root", name)
		}
		return colour(t, rules, def)
	}
	if !strings.HasPrefix(v, "#") {
		t.Fatalf("colour %q is not #rgb, #rrggbb or var(--…)", v)
	}
	h := v[1:]
	if len(h) == 3 {
		h = string([]byte{h[0], h[0], h[1], h[1], h[2], h[2]})
	}
	if len(h) != 6 {
		t.Fatalf("colour %q has %d hex digits", v, len(h))
	}
	var c [3]float64
	for i := range 3 {
		n, err := strconv.ParseUint(h[2*i:2*i+2], 16, 8)
		if err != nil {
			t.Fatalf("colour %q: %v", v, err)
		}
		c[i] = float64(n) / 255
	}
	return c
}

// contrast is the WCAG 2.x contrast ratio (L1 + 0.05)/(L2 + 0.05) of two
// sRGB colours, from their relative luminances (WCAG 2.1, "relative
// luminance" and "contrast ratio" definitions).
func contrast(a, b [3]float64) float64 {
	lum := func(c [3]float64) float64 {
		var l [3]float64
		for i, v := range c {
			if v <= 0.04045 {
				l[i] = v / 12.92
			} else {
				l[i] = math.Pow((v+0.055)/1.055, 2.4)
			}
		}
		return 0.2126*l[0] + 0.7152*l[1] + 0.0722*l[2]
	}
	la, lb := lum(a), lum(b)
	if la < lb {
		la, lb = lb, la
	}
	return (la + 0.05) / (lb + 0.05)
}

func TestContrastFormula(t *testing.T) {
	black, white := [3]float64{0, 0, 0}, [3]float64{1, 1, 1}
	if got := contrast(black, white); math.Abs(got-21) > 1e-9 {
		t.Errorf("black on white = %.3f, want 21 (WCAG maximum)", got)
	}
	// #767676 on white is the lightest grey that passes 4.5:1 (4.54:1,
	// a widely quoted value computed from the same WCAG formula).
	g := float64(0x76) / 255
	if got := contrast([3]float64{g, g, g}, white); math.Abs(got-4.54) > 0.01 {
		t.Errorf("#767676 on white = %.3f, want 4.54", got)
	}
}

// textPairs are the stylesheet's text colours on the backgrounds they are
// shown on: (what, selector and property of the text colour, selector and
// property of the background).
var textPairs = []struct{ what, fgSel, fgProp, bgSel, bgProp string }{
	{"body text", ":root", "color", ":root", "background"},
	{"text on a card", ":root", "color", ".card", "background"},
	{"table heading", ":root", "color", "table.data th", "background"},
	{"current table row", ":root", "color", "table.data tr.current td", "background"},
	{"warning", ":root", "color", ".warnings li", "background"},
	{"LTE note", ":root", "color", ".warnings li.lte", "background"},
	{"link on a card", "a", "color", ".card", "background"},
	{"link on the page", "a", "color", ":root", "background"},
	{"link in a table heading", "a", "color", "table.data th", "background"},
	{"muted text on a card", ".muted", "color", ".card", "background"},
	{"muted text on the page", ".muted", "color", ":root", "background"},
	{"muted unit in a table heading", "table.lines-key .unit", "color", "table.data th", "background"},
	{"figure caption", "figcaption", "color", ":root", "background"},
	{"footer", "footer", "color", ":root", "background"},
	{"header brand", "header.top .brand", "color", "header.top", "background"},
	{"header navigation", "header.top nav a", "color", "header.top", "background"},
	{"header text", "header.top", "color", "header.top", "background"},
	{"header account link", "header.top .who a", "color", "header.top", "background"},
	{"header sign-out button", "header.top .who button.secondary", "color", "header.top", "background"},
	{"button", "button, .button", "color", "button, .button", "background"},
	{"secondary button", "button.secondary, .button.secondary", "color", "button.secondary, .button.secondary", "background"},
	{"error message", ".flash.error", "color", ".flash.error", "background"},
	{"info message", ":root", "color", ".flash.info", "background"},
	{"warning count", ".warn-count", "color", ".card", "background"},
	{"no-warnings note", ".ok-text", "color", ".card", "background"},
	{"details summary", "details.all-columns > summary", "color", ".card", "background"},
	{"skip link", ".skip-link", "color", ".skip-link", "background"},
	{"badge, submitted", ":root", "color", ".badge.submitted", "background"},
	{"badge, returned", ":root", "color", ".badge.returned", "background"},
	{"badge, signed off", ":root", "color", ".badge.signed_off", "background"},
	{"settings block", ":root", "color", "pre.settings", "background"},
	{"input text", "input, select, textarea", "color", "input, select, textarea", "background"},
	{"correlation |r| < 0.5", "table.corr-matrix td.r0", "color", "table.corr-matrix td.r0", "background"},
	{"correlation |r| 0.5–0.8", "table.corr-matrix td.r1", "color", "table.corr-matrix td.r1", "background"},
	{"correlation |r| 0.8–0.95", "table.corr-matrix td.r2", "color", "table.corr-matrix td.r2", "background"},
	{"correlation |r| ≥ 0.95", "table.corr-matrix td.r3", "color", "table.corr-matrix td.r3", "background"},
	{"correlation diagonal", "table.corr-matrix td.diag", "color", "table.corr-matrix td.diag", "background"},
	{"routes far apart", "table.route-compare .far-word", "color", ".card", "background"},
	{"whole-fit warning", ":root", "color", ".whole-warn", "background"},
}

// TestTextContrast: every listed text colour of glowlog-2.css has a
// contrast ratio of at least 4.5:1 on its background (WCAG 2.1 AA for
// normal text). The figures are logged for the notes.
func TestTextContrast(t *testing.T) {
	b, err := os.ReadFile("glowlog-2.css")
	if err != nil {
		t.Fatal(err)
	}
	rules := cssRules(t, string(b))
	for _, p := range textPairs {
		fg, ok := rules[p.fgSel][p.fgProp]
		if !ok {
			t.Errorf("%s: no %s in rule %q", p.what, p.fgProp, p.fgSel)
			continue
		}
		bg, ok := rules[p.bgSel][p.bgProp]
		if !ok {
			t.Errorf("%s: no %s in rule %q", p.what, p.bgProp, p.bgSel)
			continue
		}
		r := contrast(colour(t, rules, fg), colour(t, rules, bg))
		line := fmt.Sprintf("%-30s %-22s on %-22s %5.2f:1", p.what, fg, bg, r)
		if r < 4.5 {
			t.Errorf("%s: below 4.5:1", line)
		} else {
			t.Log(line)
		}
	}
}
