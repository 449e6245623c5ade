package output

import (
	"encoding/json"
	"errors"
	"fmt"
	"reflect"
)

// JSONFault says in a reader's terms what encoding/json found wrong in a
// file bandsolve wrote and someone changed: which field holds what kind
// of value where another belongs, or where the text stops being JSON.
// encoding/json's own messages name Go types ("cannot unmarshal string
// into Go struct field Manifest.supplied of type pipeline.InputFile"),
// which say nothing to whoever opens the file.
func JSONFault(err error) string {
	var te *json.UnmarshalTypeError
	if errors.As(err, &te) {
		where := "the file"
		if te.Field != "" {
			where = fmt.Sprintf("the field %q", te.Field)
		}
		return fmt.Sprintf("%s holds %s where %s belongs, near byte %d", where, jsonKind(te.Value), goKind(te.Type), te.Offset)
	}
	var se *json.SyntaxError
	if errors.As(err, &se) {
		return fmt.Sprintf("the text stops being JSON at byte %d", se.Offset)
	}
	return err.Error()
}

// jsonKind names a JSON value as UnmarshalTypeError.Value gives it.
func jsonKind(v string) string {
	switch v {
	case "array":
		return "a list"
	case "object":
		return "an object"
	case "string":
		return "a string"
	case "bool":
		return "true or false"
	case "null":
		return "null"
	}
	if len(v) >= 6 && v[:6] == "number" {
		return "a number"
	}
	return v
}

// goKind names the JSON a Go type reads.
func goKind(t reflect.Type) string {
	if t == nil {
		return "another value"
	}
	switch t.Kind() {
	case reflect.Struct, reflect.Map:
		return "an object"
	case reflect.Slice, reflect.Array:
		return "a list"
	case reflect.String:
		return "a string"
	case reflect.Bool:
		return "true or false"
	case reflect.Int, reflect.Int8, reflect.Int16, reflect.Int32, reflect.Int64,
		reflect.Uint, reflect.Uint8, reflect.Uint16, reflect.Uint32, reflect.Uint64:
		return "a whole number"
	case reflect.Float32, reflect.Float64:
		return "a number"
	case reflect.Pointer:
		return goKind(t.Elem())
	}
	return "another value"
}
