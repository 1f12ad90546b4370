package capture

import (
	"fmt"
	"math"
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

// TestCSVMetadataColumnsStream reads a file with metadata in the leading
// columns that is much longer than the sniffed sample: the rows after it
// are still read by their data columns alone (their metadata cells hold
// text or nothing), and a bad data cell far on keeps its true line and
// byte column. The samples are i mod 1000 and -i, the time i·1e-6 s, so
// the rate is 1/1e-6 Hz (closed form).
func TestCSVMetadataColumnsStream(t *testing.T) {
	var sb strings.Builder
	const rows = 30000
	for i := 0; i < rows; i++ {
		meta := "," // two empty cells
		switch {
		case i == 0:
			meta = "Record Length,30000"
		case i == 1:
			meta = "Sample Interval,1e-06"
		case i == 25000:
			meta = "note,beam off" // text in a metadata cell, past the sample
		}
		fmt.Fprintf(&sb, "%s,%.6e,%d,%d\n", meta, float64(i)*1e-6, i%1000, -i)
	}
	text := sb.String()
	if len(text) < 4*sniffCSVBytes {
		t.Fatalf("fixture is only %d bytes", len(text))
	}
	rec, err := readCSVString(t, text, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if rec.Frames() != rows || math.Abs(rec.SampleRateHz-1e6) > 1e-3 || len(rec.Channels) != 2 || len(rec.Warnings) != 0 {
		t.Fatalf("%d frames at %v Hz, %d channels, warnings %q", rec.Frames(), rec.SampleRateHz, len(rec.Channels), rec.Warnings)
	}
	for i := 0; i < rows; i++ {
		if rec.Channels[0].Samples[i] != float32(i%1000) || rec.Channels[1].Samples[i] != float32(-i) {
			t.Fatalf("row %d: %v %v", i, rec.Channels[0].Samples[i], rec.Channels[1].Samples[i])
		}
	}
	// row i is on line i+1; ",," is 2 bytes, "2.800000e-02," 13 more
	bad := strings.Replace(text, "\n,,2.800000e-02,0,-28000\n", "\n,,2.800000e-02,zero,-28000\n", 1)
	if bad == text {
		t.Fatal("row 28000 not found")
	}
	_, err = readCSVString(t, bad, Options{})
	if err == nil || !strings.Contains(err.Error(), "line 28001:16") {
		t.Fatalf("err = %v, want line 28001:16", err)
	}
}

// BenchmarkCSVMetadataColumns reads about 1 M rows with metadata in the
// leading columns of the first rows (empty later), a time column and two
// channels.
func BenchmarkCSVMetadataColumns(b *testing.B) {
	var sb strings.Builder
	const rows = 1 << 20
	for i := 0; i < rows; i++ {
		meta := ",,"
		if i == 0 {
			meta = "Record Length,1048576,Points"
		}
		fmt.Fprintf(&sb, "%s,%.6e,%.4f,%.1f,\n", meta, float64(i)*1e-6, math.Sin(float64(i)/50), float64(5*(i/100%2)))
	}
	text := sb.String()
	b.SetBytes(int64(len(text)))
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rec, err := readCSV(strings.NewReader(text), int64(len(text)), Options{})
		if err != nil || rec.Frames() != rows {
			b.Fatal(err)
		}
	}
}
