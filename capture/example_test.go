package capture_test

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"

	"spotloom/capture"
)

// A capture written as 16-bit WAV and opened again: integer samples come
// back on ±1.0 full scale, rounded to the nearest of 65536 codes.
func ExampleOpen() {
	rec := &capture.Recording{SampleRateHz: 48000, Channels: []capture.Channel{
		{Name: "detector", Samples: []float32{0, 0.25, 0.5, -0.5}},
		{Name: "index", Samples: []float32{0, 1, 1, 0}},
	}}
	var buf bytes.Buffer
	if err := capture.WriteWAV(&buf, rec, "int16"); err != nil {
		fmt.Println(err)
		return
	}
	dir, _ := os.MkdirTemp("", "example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "bench.wav")
	os.WriteFile(path, buf.Bytes(), 0o644)

	got, err := capture.Open(path, capture.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(got.Source.Format, got.Source.SampleType, got.SampleRateHz, "Hz", got.Frames(), "frames")
	fmt.Println(got.Channels[0].Samples)
	fmt.Println(got.Channels[1].Samples) // 1.0 clips to 32767/32768
	// Output:
	// wav int16 48000 Hz 4 frames
	// [0 0.25 0.5 -0.5]
	// [0 0.9999695 0.9999695 0]
}

// A raw ADC dump needs a layout: given in Options, or as NAME.layout.json
// beside the file.
func ExampleRawLayout() {
	dir, _ := os.MkdirTemp("", "example")
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "dump.bin")
	// two frames of two big-endian int16 channels
	os.WriteFile(path, []byte{0x10, 0x00, 0xFF, 0xF0, 0x20, 0x00, 0x00, 0x10}, 0o644)
	layout := capture.RawLayout{SampleType: "int16", ByteOrder: "big", Channels: 2, Interleaved: true,
		SampleRateHz: 1e6, Scale: []float64{0.001}, Names: []string{"det", "index"}}
	capture.WriteLayoutFile(filepath.Join(dir, "dump.layout.json"), layout)

	rec, err := capture.Open(path, capture.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, c := range rec.Channels {
		fmt.Println(c.Name, c.Unit, c.Samples)
	}
	// Output:
	// det V [4.096 8.192]
	// index V [-0.016 0.016]
}
