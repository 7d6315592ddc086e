package report

import (
	"fmt"
	"reflect"
	"strconv"
	"strings"

	"gaptrace/calib/experiment"
	"gaptrace/calib/geometry"
)

// yamlKey is the experiment-file key of a struct field, "" for none.
func yamlKey(f reflect.StructField) string {
	k, _, _ := strings.Cut(f.Tag.Get("yaml"), ",")
	if k == "-" {
		return ""
	}
	return k
}

// givenAs is how a motion segment was written in the experiment file: the
// key and value of each quantity set besides its times ("rate_per_s:
// 1.5"). It reads the segment's fields by their YAML keys, so quantities
// the file gains (an angular velocity, rpm) show as written without a
// change here.
func givenAs(seg experiment.Segment) string {
	v := reflect.ValueOf(seg)
	var parts []string
	for i := range v.NumField() {
		k := yamlKey(v.Type().Field(i))
		if k == "" || k == "start_s" || k == "end_s" {
			continue
		}
		if s, ok := given(v.Field(i)); ok {
			parts = append(parts, k+": "+s)
		}
	}
	return strings.Join(parts, ", ")
}

// given prints a set field: a non-nil pointer, or a non-zero number or
// string.
func given(f reflect.Value) (string, bool) {
	if f.Kind() == reflect.Pointer {
		if f.IsNil() {
			return "", false
		}
		f = f.Elem()
	} else if f.IsZero() {
		return "", false
	}
	switch f.Kind() {
	case reflect.Float32, reflect.Float64:
		return strconv.FormatFloat(f.Float(), 'g', -1, 64), true
	case reflect.Int, reflect.Int64, reflect.Int32:
		return strconv.FormatInt(f.Int(), 10), true
	case reflect.String:
		return f.String(), true
	}
	return fmt.Sprint(f.Interface()), true
}

// geometryKey returns the value of the geometry's key k as written in the
// experiment file ("" when the file has no such key or leaves it empty):
// read by the YAML key, for keys the geometry may gain (rate_at).
func geometryKey(g geometry.Geometry, k string) string {
	v := reflect.ValueOf(g)
	for i := range v.NumField() {
		if yamlKey(v.Type().Field(i)) == k {
			s, _ := given(v.Field(i))
			return s
		}
	}
	return ""
}

// rateConvention names, in a few words, the convention behind the nominal
// rate of a geometry, for the findings.
func rateConvention(g geometry.Geometry) string {
	switch g.Kind {
	case geometry.Couette:
		if at := geometryKey(g, "rate_at"); at != "" && at != "representative" {
			return "the rate at the " + at + " cylinder, as the experiment file's rate_at asks"
		}
		return "the representative rate of a Couette cell (DIN 53019-1 / ISO 3219)"
	case geometry.ParallelPlate:
		return "the rim rate, the largest of the rates along the radius"
	case geometry.ConePlate:
		return "the cone's rate, the same at every radius"
	}
	return ""
}

// rateConventionNote explains the nominal rate of a geometry in a
// sentence, for the imposed motion's table.
func rateConventionNote(g geometry.Geometry) string {
	switch g.Kind {
	case geometry.Plates:
		return "Nominal rate: the moving plate's speed over the gap, the same across the gap."
	case geometry.ConePlate:
		return "Nominal rate: the cone's angular velocity over the tangent of the cone angle, the same at every radius " +
			"of a cone-plate tool for small angles; at the observed rim it is the rim speed over the rim gap."
	case geometry.ParallelPlate:
		return "Nominal rate: the rim rate, the rim's speed over the gap at the observed radius. Between parallel " +
			"plates the rate grows from zero at the axis to this value at the rim: it is the largest of the rates " +
			"along the radius, and what the camera sees at the rim."
	case geometry.Couette:
		s := "Nominal rate: the representative rate of a Couette cell, γ̇ = ω (1 + δ²)/(δ² − 1) with δ = R_o/R_i " +
			"and ω the rotating cylinder's angular velocity (DIN 53019-1 / ISO 3219; from memory). It lies between " +
			"the rates at the two cylinders; the rotating cylinder's speed over the gap, the mean rate across the gap, " +
			"is not the same number."
		if at := geometryKey(g, "rate_at"); at != "" {
			s += " The experiment file sets rate_at: " + at + "."
		}
		return s
	}
	return ""
}

// meanRate is the wall speed over the gap where a geometry's nominal rate
// is another number (a Couette cell), NaN otherwise.
func meanRate(g geometry.Geometry, wallSpeedUMPerS float64) float64 {
	if g.Kind != geometry.Couette || !known(wallSpeedUMPerS) {
		return nan
	}
	return wallSpeedUMPerS / g.Gap()
}
