package diag

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
)

// NumericError reports an input value that the analysis cannot turn into
// finite numbers: an intensity uncertainty far below the precision of any
// measurement, a width so small that its relative error overflows, or a
// result that came out NaN or ±Inf. It names the line and the value.
// Analyze returns it wrapped in a *LineError when a line is at fault.
type NumericError struct {
	// Upper is the upper level of the line at fault (0: not one line).
	Upper int
	// Field is the input field (e.g. "intensity_unc") or, for a result
	// that came out non-finite, the JSON path of the result field.
	Field string
	// Value is the offending value.
	Value float64
	// Msg says what is wrong and what to do.
	Msg string
}

func (e *NumericError) Error() string {
	var b strings.Builder
	b.WriteString("diag: ")
	if e.Field != "" {
		fmt.Fprintf(&b, "%s = %s: ", e.Field, strconv.FormatFloat(e.Value, 'g', -1, 64))
	}
	b.WriteString(e.Msg)
	return b.String()
}

// finite reports whether v is neither NaN nor ±Inf.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// CheckFinite walks v the way encoding/json would write it and returns a
// *NumericError naming the JSON path of the first float that is NaN or
// ±Inf (encoding/json refuses those). Nil pointers are null and fine;
// values with their own MarshalJSON are trusted to write non-finite
// numbers as null; unexported and "-" fields are skipped.
func CheckFinite(v any) error {
	path, bad, ok := walkFinite(reflect.ValueOf(v), "")
	if ok {
		return nil
	}
	if path == "" {
		path = "result"
	}
	return &NumericError{Field: path, Value: bad,
		Msg: "the analysis gave a non-finite number here: an input value is outside the range that can be analysed (check the magnitudes and units of the values of this line)"}
}

var marshalerType = reflect.TypeFor[json.Marshaler]()

func walkFinite(v reflect.Value, path string) (string, float64, bool) {
	if !v.IsValid() {
		return "", 0, true
	}
	if v.Kind() != reflect.Pointer && v.Kind() != reflect.Interface && v.Type().Implements(marshalerType) {
		return "", 0, true
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		if f := v.Float(); !finite(f) {
			return path, f, false
		}
	case reflect.Pointer, reflect.Interface:
		if v.IsNil() {
			return "", 0, true
		}
		if v.Kind() == reflect.Pointer && v.Type().Implements(marshalerType) {
			return "", 0, true
		}
		return walkFinite(v.Elem(), path)
	case reflect.Slice, reflect.Array:
		if v.Kind() == reflect.Slice && v.Type().Elem().Kind() == reflect.Uint8 {
			return "", 0, true
		}
		for i := range v.Len() {
			if p, f, ok := walkFinite(v.Index(i), path+"["+strconv.Itoa(i)+"]"); !ok {
				return p, f, false
			}
		}
	case reflect.Map:
		it := v.MapRange()
		for it.Next() {
			if p, f, ok := walkFinite(it.Value(), fmt.Sprintf("%s[%v]", path, it.Key())); !ok {
				return p, f, false
			}
		}
	case reflect.Struct:
		t := v.Type()
		for i := range t.NumField() {
			sf := t.Field(i)
			if !sf.IsExported() && !sf.Anonymous {
				continue
			}
			name, _, _ := strings.Cut(sf.Tag.Get("json"), ",")
			if name == "-" {
				continue
			}
			p := path
			if !sf.Anonymous || name != "" {
				if name == "" {
					name = sf.Name
				}
				if p != "" {
					p += "."
				}
				p += name
			}
			if q, f, ok := walkFinite(v.Field(i), p); !ok {
				return q, f, false
			}
		}
	}
	return "", 0, true
}
