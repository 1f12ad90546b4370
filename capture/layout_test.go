package capture

import (
	"encoding/json"
	"strings"
	"testing"
)

func TestParseLayout(t *testing.T) {
	l, err := ParseLayout([]byte(exampleLayout))
	if err != nil {
		t.Fatalf("the example layout shown to users does not parse: %v", err)
	}
	if l.SampleType != "int16" || l.Channels != 3 || !l.Interleaved || l.SampleRateHz != 100000 || len(l.Names) != 3 {
		t.Fatalf("%+v", l)
	}
	// MarshalJSON and ParseLayout round-trip, byte order filled in.
	data, err := json.Marshal(RawLayout{SampleType: "float32", Channels: 2, Interleaved: false, SampleRateHz: 1})
	if err != nil {
		t.Fatal(err)
	}
	back, err := ParseLayout(data)
	if err != nil || back.ByteOrder != "little" || back.Interleaved || back.SampleType != "float32" {
		t.Fatalf("%s -> %+v, %v", data, back, err)
	}
	for _, tc := range []struct{ json, words string }{
		{`{"sample_type":"int16","channels":2,"interleaved":true,"colour":1}`, `layout: unknown key "colour" at line 1, column 56 in the layout: allowed keys are sample_type`},
		// Same line:column form as recipe errors (strictjson).
		{"{\"sample_type\": \"int16\",\n \"channels\": \"two\", \"interleaved\": true}", `layout: key "channels" at line 2, column 14 holds the text "two", expected a whole number`},
		{"{\"sample_type\": \"int16\",\n \"channels\": 2,, \"interleaved\": true}", `layout: broken JSON at line 2, column 16`},
		{`{"sample_type":"int16","channels":2,"channels":3,"interleaved":true}`, `layout: key "channels" at line 1, column 37 is given twice`},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"scale":[1,"x"]}`, `layout: key "scale[1]" at line 1, column 67 holds the text "x", expected a number`},
		{`{"sample_type":"int16","channels":2}`, `no "interleaved" key`},
		{`{"sample_type":"int12","channels":2,"interleaved":true}`, "sample_type \"int12\""},
		{`{"sample_type":"int16","channels":0,"interleaved":true}`, "channels 0"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"byte_order":"middle"}`, "byte_order"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"scale":[1,2,3]}`, "scale has 3 values"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"scale":[0]}`, "scale[0] is 0"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"names":["a"]}`, "names has 1"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"header_bytes":-4}`, "header_bytes -4"},
		{`{"sample_type":"int16","channels":2,"interleaved":true,"sample_rate_hz":-1}`, "sample_rate_hz -1"},
	} {
		_, err := ParseLayout([]byte(tc.json))
		if err == nil || !strings.Contains(err.Error(), tc.words) {
			t.Errorf("%s: %v, want %q", tc.json, err, tc.words)
		}
	}
}

// A layout saved by an editor that writes a UTF-8 byte-order mark reads.
func TestParseLayoutWithBOM(t *testing.T) {
	l, err := ParseLayout(append([]byte("\xEF\xBB\xBF"), exampleLayout...))
	if err != nil || l.Channels != 3 {
		t.Fatalf("%+v, %v", l, err)
	}
}

func TestLayoutPaths(t *testing.T) {
	got := strings.Join(LayoutPaths("/d/run7.bin"), " ")
	if got != "/d/run7.bin.layout.json /d/run7.layout.json" {
		t.Fatalf("%s", got)
	}
}
