package strictjson

import (
	"encoding/json"
	"errors"
	"fmt"
	"reflect"
	"strings"
	"testing"
)

type level string

// UnmarshalJSON takes "low" or "high" only, like a type with its own rules.
func (l *level) UnmarshalJSON(b []byte) error {
	var s string
	if err := json.Unmarshal(b, &s); err != nil || (s != "low" && s != "high") {
		return fmt.Errorf("a level is \"low\" or \"high\", got %s", b)
	}
	*l = level(s)
	return nil
}

type inner struct {
	Points [][2]float64 `json:"points"`
	Gain   *float64     `json:"gain"`
	Count  int          `json:"count"`
}

type outer struct {
	Name   string            `json:"name"`
	On     bool              `json:"on"`
	Inner  inner             `json:"inner"`
	Level  level             `json:"level"`
	Labels map[string]string `json:"labels,omitempty"`
	Extra  any               `json:"extra"`
}

// Every problem is an *Error of the right kind, naming the dotted key and
// the line:column (counted by hand in the inputs).
func TestDecodeErrors(t *testing.T) {
	for _, c := range []struct {
		src  string
		kind Kind
		key  string
		line int
		col  int
		text string
	}{
		{`{"name": "a", "colour": 1}`, UnknownKey, "colour", 1, 15, `unknown key "colour" at line 1, column 15 in the thing: allowed keys are name, on, inner, level, labels, extra`},
		{"{\"inner\": {\n  \"gian\": 2}}", UnknownKey, "inner.gian", 2, 3, `in "inner": allowed keys are points, gain, count`},
		{`{"Name": "a"}`, UnknownKey, "Name", 1, 2, "allowed keys are name"},
		{`{"name": "a", "name": "b"}`, Duplicate, "name", 1, 15, `key "name" at line 1, column 15 is given twice (first at line 1, column 2)`},
		{"{\"inner\": {\"points\": [[1, 2],\n [3, 4, 5]]}}", Length, "inner.points[1]", 2, 2, `key "inner.points[1]" at line 2, column 2 has more than 2 values: expected exactly 2`},
		{`{"inner": {"points": [[1]]}}`, Length, "inner.points[0]", 1, 23, "has 1 values: expected exactly 2"},
		{`{"inner": {"points": [[1, "2"]]}}`, WrongType, "inner.points[0][1]", 1, 27, `holds the text "2", expected a number`},
		{`{"name": 3}`, WrongType, "name", 1, 10, "holds the number 3, expected text in quotes"},
		{`{"on": "yes"}`, WrongType, "on", 1, 8, "expected true or false"},
		{`{"inner": []}`, WrongType, "inner", 1, 11, "holds a list, expected an object {...}"},
		{`{"inner": {"count": 1.5}}`, WrongType, "inner.count", 1, 21, "holds a JSON number 1.5, expected a whole number"},
		{`{"inner": {"count": null}}`, Null, "inner.count", 1, 21, "is null: give a whole number"},
		{`{"name": null}`, Null, "name", 1, 10, "is null"},
		{`{"level": "middle"}`, WrongType, "level", 1, 11, `is not valid: a level is "low" or "high", got "middle"`},
		{"{\n\"on\": true,}", Syntax, "", 2, 12, "broken JSON at line 2, column 12"},
		{`{"on": true} {}`, Trailing, "", 1, 14, "unexpected data at line 1, column 14 after the end of the thing"},
		{``, Empty, "", 0, 0, "the file is empty"},
		{`{"on": tr`, Empty, "", 0, 0, "ends before the thing does"},
		{`[1]`, WrongType, "", 1, 1, "holds a list, expected an object"},
	} {
		var v outer
		_, err := Decode([]byte(c.src), &v, "thing")
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("%q: %v is not an *Error", c.src, err)
			continue
		}
		if e.Kind != c.kind || e.Key != c.key || e.Line != c.line || e.Column != c.col || !strings.Contains(err.Error(), c.text) {
			t.Errorf("%q:\n got %v (kind %d key %q %d:%d)\nwant kind %d key %q %d:%d saying %q", c.src, err, e.Kind, e.Key, e.Line, e.Column, c.kind, c.key, c.line, c.col, c.text)
		}
		if !strings.HasPrefix(err.Error(), "thing: ") {
			t.Errorf("%q: %v does not start with the name", c.src, err)
		}
	}
}

// Good input decodes as the standard library decodes it, with a
// byte-order mark skipped, absent keys kept and the present keys listed.
func TestDecodeAgreesWithEncodingJSON(t *testing.T) {
	src := `{"name": "scan", "on": true, "inner": {"points": [[0.5, 0], [4.5, 400]], "gain": null},
	  "level": "high", "labels": {"a": "b"}, "extra": {"anything": [1, {"x": null}]}}`
	var want outer
	if err := json.Unmarshal([]byte(src), &want); err != nil {
		t.Fatal(err)
	}
	got := outer{Inner: inner{Count: 7}}
	present, err := Decode(append([]byte("\xEF\xBB\xBF"), src...), &got, "thing")
	if err != nil {
		t.Fatal(err)
	}
	want.Inner.Count = 7 // absent: kept
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %+v\nencoding/json gives %+v", got, want)
	}
	for _, k := range []string{"name", "inner", "inner.points", "inner.gain", "labels.a", "extra"} {
		if !present[k] {
			t.Errorf("%s not listed as present: %v", k, present)
		}
	}
	if present["inner.count"] {
		t.Errorf("absent key listed as present")
	}
}

// Messages stay short whatever the input holds.
func TestDecodeErrorsStayShort(t *testing.T) {
	long := strings.Repeat("x", 1_000_000)
	for _, src := range []string{
		`{"` + long + `": 1}`,
		`{"name": 1` + strings.Repeat("0", 1_000_000) + `}`,
		`{"inner": {"count": 1` + strings.Repeat("0", 1_000_000) + `}}`,
		`{"level": "` + long + `"}`,
		`{"on": "` + long + `"}`,
	} {
		var v outer
		_, err := Decode([]byte(src), &v, "thing")
		if err == nil || len(err.Error()) > 400 {
			t.Errorf("error of %d bytes: %.200v", len(fmt.Sprint(err)), err)
		}
	}
}

func TestLineCol(t *testing.T) {
	data := []byte("ab\ncd\n\nef")
	for off, want := range map[int64][2]int{0: {1, 1}, 2: {1, 3}, 3: {2, 1}, 7: {4, 1}, 9: {4, 3}, 99: {4, 3}} {
		if l, c := LineCol(data, off); l != want[0] || c != want[1] {
			t.Errorf("offset %d: %d:%d, want %d:%d", off, l, c, want[0], want[1])
		}
	}
}
