package capture

import (
	"fmt"
	"strings"
	"testing"
)

// TestCSVStreamAcrossBuffers reads rows that straddle the read buffer, a
// quoted field with a line break on the boundary, and a row longer than the
// buffer, and checks every value and the line numbers of a late error.
func TestCSVStreamAcrossBuffers(t *testing.T) {
	var sb strings.Builder
	sb.WriteString("\xEF\xBB\xBFtime (s),a (V),b (V)\n") // UTF-8 byte order mark first
	const rows = 40000
	for i := 0; i < rows; i++ {
		if i == 20000 {
			// a quoted number and a row longer than the read buffer
			// (spaces around a number are allowed)
			fmt.Fprintf(&sb, "%d,\"%d\",%s%d\n", i, i%1000, strings.Repeat(" ", 3*readBufferBytes/2), -i)
			continue
		}
		fmt.Fprintf(&sb, "%d,%d,%d\n", i, i%1000, -i)
	}
	text := sb.String()
	rec, err := readCSVString(t, text, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Frames() != rows || rec.SampleRateHz != 1 {
		t.Fatalf("%d frames at %v Hz", rec.Frames(), rec.SampleRateHz)
	}
	for i := 0; i < rows; i++ {
		if rec.Channels[0].Samples[i] != float32(i%1000) || rec.Channels[1].Samples[i] != float32(-i) {
			t.Fatalf("row %d: %v %v", i, rec.Channels[0].Samples[i], rec.Channels[1].Samples[i])
		}
	}
	// A bad cell far past the sniffed start keeps its true line number:
	// line 1 is the header, row i is on line i+2.
	bad := strings.Replace(text, "\n35000,0,-35000\n", "\n35000,zero,-35000\n", 1)
	_, err = readCSVString(t, bad, Options{})
	if err == nil || !strings.Contains(err.Error(), "line 35002:7") {
		t.Fatalf("err = %v, want line 35002:7", err)
	}
	// A quoted field with a line break across rows is one record (RFC 4180
	// rule 6), so the next row's number follows on the same record.
	multi := "time,a,b\n0,1,5\n1,2,6\n2,3,\"first\nsecond\"\n3,4,7\n4,5,8\n"
	_, err = readCSVString(t, multi, Options{})
	if err == nil || !strings.Contains(err.Error(), "line 4:5") || !strings.Contains(err.Error(), `"first\nsecond"`) {
		t.Fatalf("multi-line note column: %v", err)
	}
}
