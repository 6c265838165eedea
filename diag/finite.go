package diag

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
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
// numbers as null; unexported and "-" fields are skipped. Types that hold
// no float are skipped by a per-type cache, and the path is built only on
// failure, so a check costs little beside an analysis.
func CheckFinite(v any) error {
	var path []string
	bad, ok := walkFinite(reflect.ValueOf(v), &path)
	if ok {
		return nil
	}
	var b strings.Builder
	for i := len(path) - 1; i >= 0; i-- {
		seg := path[i]
		if b.Len() > 0 && seg[0] != '[' {
			b.WriteByte('.')
		}
		b.WriteString(seg)
	}
	field := b.String()
	if field == "" {
		field = "result"
	}
	return &NumericError{Field: field, Value: bad,
		Msg: "the analysis gave a non-finite number here: an input value is outside the range that can be analysed (check the magnitudes and units of the values of this line)"}
}

var marshalerType = reflect.TypeFor[json.Marshaler]()

// typePlan is what CheckFinite needs to know about a type, computed once:
// whether its values can hold a float that encoding/json writes itself
// (not through a MarshalJSON method), and for a struct the fields that
// can, with their JSON names.
type typePlan struct {
	t      reflect.Type
	holds  bool
	fields []fieldPlan
	// elem is the plan of the element type of a pointer, slice, array or
	// map type, looked up on first use (a type may contain itself through
	// a pointer), so that the walk below a value needs no further
	// look-ups.
	elem atomic.Pointer[typePlan]
}

func (p *typePlan) elemPlan() *typePlan {
	if e := p.elem.Load(); e != nil {
		return e
	}
	e := planOf(p.t.Elem())
	p.elem.Store(e)
	return e
}

type fieldPlan struct {
	index  int
	name   string // JSON name; "" for an embedded struct written inline
	inline bool
	plan   *typePlan // the field type's
}

var plans sync.Map // reflect.Type → *typePlan

func planOf(t reflect.Type) *typePlan {
	if p, ok := plans.Load(t); ok {
		return p.(*typePlan)
	}
	p := &typePlan{t: t, holds: computeHoldsFloat(t, map[reflect.Type]bool{})}
	if p.holds && t.Kind() == reflect.Struct {
		for i := range t.NumField() {
			sf := t.Field(i)
			tag := sf.Tag.Get("json")
			name, _, _ := strings.Cut(tag, ",")
			if (!sf.IsExported() && !sf.Anonymous) || tag == "-" {
				continue
			}
			// planOf(sf.Type).holds is computeHoldsFloat(sf.Type, {}),
			// cached: nested result types are decided once, not again for
			// every type that contains them.
			fpl := planOf(sf.Type)
			if !fpl.holds {
				continue
			}
			fp := fieldPlan{index: i, name: name, plan: fpl}
			if sf.Anonymous && name == "" {
				fp.inline = true
			} else if name == "" {
				fp.name = sf.Name
			}
			p.fields = append(p.fields, fp)
		}
	}
	plans.Store(t, p)
	return p
}

// computeHoldsFloat decides typePlan.holds; visiting ends the recursion of
// self-referencing types (their other fields decide).
func computeHoldsFloat(t reflect.Type, visiting map[reflect.Type]bool) bool {
	if visiting[t] {
		return false
	}
	visiting[t] = true
	defer delete(visiting, t)
	if t.Implements(marshalerType) {
		return false
	}
	switch t.Kind() {
	case reflect.Float32, reflect.Float64:
		return true
	case reflect.Interface:
		return true // decided by the dynamic value
	case reflect.Pointer, reflect.Map:
		return computeHoldsFloat(t.Elem(), visiting)
	case reflect.Slice, reflect.Array:
		return t.Elem().Kind() != reflect.Uint8 && computeHoldsFloat(t.Elem(), visiting)
	case reflect.Struct:
		for i := range t.NumField() {
			sf := t.Field(i)
			if (!sf.IsExported() && !sf.Anonymous) || sf.Tag.Get("json") == "-" {
				continue
			}
			if computeHoldsFloat(sf.Type, visiting) {
				return true
			}
		}
	}
	return false
}

// walkFinite returns the first non-finite float in v; on failure *path
// holds the JSON path segments from the innermost outward.
func walkFinite(v reflect.Value, path *[]string) (float64, bool) {
	if !v.IsValid() {
		return 0, true
	}
	return walkPlan(v, planOf(v.Type()), path)
}

// walkPlan is walkFinite of v, whose type's plan is p.
func walkPlan(v reflect.Value, p *typePlan, path *[]string) (float64, bool) {
	if !p.holds {
		return 0, true
	}
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		if f := v.Float(); !finite(f) {
			return f, false
		}
	case reflect.Interface:
		if v.IsNil() {
			return 0, true
		}
		return walkFinite(v.Elem(), path)
	case reflect.Pointer:
		if v.IsNil() {
			return 0, true
		}
		return walkPlan(v.Elem(), p.elemPlan(), path)
	case reflect.Slice, reflect.Array:
		ep := p.elemPlan()
		for i := range v.Len() {
			if f, ok := walkPlan(v.Index(i), ep, path); !ok {
				*path = append(*path, "["+strconv.Itoa(i)+"]")
				return f, false
			}
		}
	case reflect.Map:
		ep := p.elemPlan()
		it := v.MapRange()
		for it.Next() {
			if f, ok := walkPlan(it.Value(), ep, path); !ok {
				*path = append(*path, fmt.Sprintf("[%v]", it.Key()))
				return f, false
			}
		}
	case reflect.Struct:
		for _, fp := range p.fields {
			if f, ok := walkPlan(v.Field(fp.index), fp.plan, path); !ok {
				if !fp.inline {
					*path = append(*path, fp.name)
				}
				return f, false
			}
		}
	}
	return 0, true
}
