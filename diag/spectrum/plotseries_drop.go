package spectrum

import "strings"

// DropSeries appends to dst the JSON that AppendJSONSplit wrote (js) with
// every plot series left out, its key with it: the result's numbers
// without its plot arrays, for a client that does not draw them. Each
// placeholder [null] (AppendJSONSplit makes sure the JSON holds no other)
// is preceded by its key, "name":, which follows either a comma (the
// comma, key and placeholder go) or the object's opening brace (the key,
// placeholder and the comma after them go). Text that is not in that form
// is copied as it is (AppendJSONSplit never writes it).
func DropSeries(dst []byte, js string) []byte {
	start := len(dst)
	// before returns the byte before js[k] in the text: in js, or the
	// last one written to dst.
	before := func(k int) byte {
		switch {
		case k >= 1:
			return js[k-1]
		case k == 0 && len(dst) > start:
			return dst[len(dst)-1]
		}
		return 0
	}
	for {
		i := strings.Index(js, placeholderText)
		if i < 0 {
			return append(dst, js...)
		}
		end := i + len(placeholderText)
		// js[:i] ends with "name":
		k := -1
		if i >= 3 && js[i-1] == ':' && js[i-2] == '"' {
			k = strings.LastIndexByte(js[:i-2], '"')
		}
		switch b := before(k); {
		case k >= 0 && b == ',':
			if k >= 1 {
				dst = append(dst, js[:k-1]...)
			} else {
				dst = dst[:len(dst)-1]
			}
			js = js[end:]
		case k >= 0 && b == '{':
			dst = append(dst, js[:k]...)
			js = js[end:]
			if len(js) > 0 && js[0] == ',' {
				js = js[1:]
			}
		default:
			dst = append(dst, js[:end]...)
			js = js[end:]
		}
	}
}
