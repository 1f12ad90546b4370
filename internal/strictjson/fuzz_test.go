package strictjson

import (
	"encoding/json"
	"reflect"
	"testing"
)

// FuzzDecode: Decode never panics, its errors are short, and whatever it
// accepts encoding/json reads to the same value.
func FuzzDecode(f *testing.F) {
	f.Add([]byte(`{"name": "scan", "on": true, "inner": {"points": [[0.5, 0], [4.5, 400]], "gain": null, "count": 3}, "level": "low"}`))
	f.Add([]byte(`{"inner": {"points": [[1, 2, 3]]}}`))
	f.Add([]byte(`{"labels": {"a": "b", "a": "c"}, "extra": [1, {"x": null}]}`))
	f.Add([]byte("\xEF\xBB\xBF{}"))
	f.Add([]byte(`[`))
	f.Fuzz(func(t *testing.T, data []byte) {
		var got outer
		_, err := Decode(data, &got, "thing")
		if err != nil {
			if len(err.Error()) > 1000 {
				t.Fatalf("error of %d bytes", len(err.Error()))
			}
			return
		}
		var want outer
		if err := json.Unmarshal(TrimBOM(data), &want); err != nil {
			t.Fatalf("Decode accepts what encoding/json refuses: %v", err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Fatalf("Decode gives %+v, encoding/json %+v", got, want)
		}
	})
}
