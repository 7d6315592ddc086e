package summary

import (
	"encoding/json"
	"reflect"
)

// A number missing from a summary.json that is read back (one written by
// an earlier version, or by hand) is unknown, as null is, never 0: the
// records below start with every Num null before the JSON is decoded over
// them.

var numType = reflect.TypeFor[Num]()

// nullNums sets every Num field of the struct v, and of the structs it
// embeds, to Null.
func nullNums(v reflect.Value) {
	for i := range v.NumField() {
		f, sf := v.Field(i), v.Type().Field(i)
		switch {
		case sf.Type == numType:
			f.Set(reflect.ValueOf(Null))
		case sf.Anonymous && sf.Type.Kind() == reflect.Struct:
			nullNums(f)
		}
	}
}

// decodeNulled decodes b into the struct *q with its Num fields null
// beforehand.
func decodeNulled[T any](b []byte, q *T) error {
	nullNums(reflect.ValueOf(q).Elem())
	return json.Unmarshal(b, q)
}

// UnmarshalJSON decodes a shear phase, missing numbers null.
func (p *ShearPhase) UnmarshalJSON(b []byte) error {
	type plain ShearPhase
	var q plain
	err := decodeNulled(b, &q)
	*p = ShearPhase(q)
	return err
}

// UnmarshalJSON decodes a band, missing numbers null.
func (p *Band) UnmarshalJSON(b []byte) error {
	type plain Band
	var q plain
	err := decodeNulled(b, &q)
	*p = Band(q)
	return err
}

// UnmarshalJSON decodes a time-resolved window, missing numbers null.
func (p *InTime) UnmarshalJSON(b []byte) error {
	type plain InTime
	var q plain
	err := decodeNulled(b, &q)
	*p = InTime(q)
	return err
}

// UnmarshalJSON decodes the after-stop analysis, missing numbers null.
func (p *AfterStop) UnmarshalJSON(b []byte) error {
	type plain AfterStop
	var q plain
	err := decodeNulled(b, &q)
	*p = AfterStop(q)
	return err
}
