package capture

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// Seed corpora live in testdata/fuzz/FuzzNAME (Go's corpus format) and are
// written by makeFuzzCorpus from the fixtures; run a target with, e.g.,
//
//	go test ./capture -run '^$' -fuzz FuzzWAV -fuzztime 5s

// checkDecoded fails the fuzz run when a reader broke its promises: a
// typed one-line error, or a valid recording with finite samples.
func checkDecoded(t *testing.T, rec *Recording, err error) {
	t.Helper()
	if err != nil {
		var fe *FormatError
		var ue *UnsupportedError
		if !errors.As(err, &fe) && !errors.As(err, &ue) && !errors.Is(err, ErrNoLayout) {
			t.Fatalf("untyped error %T: %v", err, err)
		}
		if strings.ContainsAny(err.Error(), "\n\r") {
			t.Fatalf("error spans lines: %q", err)
		}
		return
	}
	if verr := rec.Validate(); verr != nil {
		t.Fatalf("reader returned an invalid recording: %v", verr)
	}
	if rec.Frames() == 0 {
		t.Fatalf("reader returned an empty recording without an error")
	}
	for _, c := range rec.Channels {
		for _, v := range c.Samples {
			if v-v != 0 {
				t.Fatalf("channel %s holds %v", c.Name, v)
			}
		}
	}
}

func FuzzWAV(f *testing.F) {
	f.Add(validWAV())
	f.Fuzz(func(t *testing.T, data []byte) {
		rec, err := readWAV(bytes.NewReader(data), int64(len(data)), Options{})
		checkDecoded(t, rec, err)
	})
}

func FuzzCSV(f *testing.F) {
	f.Add([]byte("time (s),a (V)\n0,1\n0.5,2\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		rec, err := readCSV(bytes.NewReader(data), int64(len(data)), Options{})
		checkDecoded(t, rec, err)
		rec, err = readCSV(bytes.NewReader(data), int64(len(data)), Options{SampleRateHz: 1000})
		checkDecoded(t, rec, err)
	})
}

var fuzzSampleTypes = []string{"int8", "uint8", "int16", "uint16", "int32", "uint32", "float32", "float64", "int12"}

func FuzzRaw(f *testing.F) {
	f.Add([]byte{1, 2, 3, 4, 5, 6, 7, 8}, uint8(2), uint8(2), uint16(0), true, false)
	f.Fuzz(func(t *testing.T, data []byte, sampleType, channels uint8, header uint16, interleaved, big bool) {
		l := RawLayout{SampleType: fuzzSampleTypes[int(sampleType)%len(fuzzSampleTypes)], Channels: int(channels),
			Interleaved: interleaved, HeaderBytes: int64(header), SampleRateHz: 1000}
		if big {
			l.ByteOrder = "big"
		}
		rec, err := readRaw(bytes.NewReader(data), int64(len(data)), l, Options{})
		checkDecoded(t, rec, err)
	})
}

// FuzzDecode fuzzes the choice of reader from content and extension.
func FuzzDecode(f *testing.F) {
	f.Add([]byte("RIFF"), ".wav")
	f.Fuzz(func(t *testing.T, data []byte, ext string) {
		rec, err := decode(bytes.NewReader(data), int64(len(data)), "capture"+ext, nil, Options{})
		checkDecoded(t, rec, err)
	})
}

// corpusFile renders values in Go's fuzz corpus format.
func corpusFile(values ...any) []byte {
	var b strings.Builder
	b.WriteString("go test fuzz v1\n")
	for _, v := range values {
		switch x := v.(type) {
		case []byte:
			b.WriteString("[]byte(" + strconv.Quote(string(x)) + ")\n")
		case string:
			b.WriteString("string(" + strconv.Quote(x) + ")\n")
		case uint8:
			b.WriteString("byte(" + strconv.Itoa(int(x)) + ")\n")
		case uint16:
			b.WriteString("uint16(" + strconv.Itoa(int(x)) + ")\n")
		case bool:
			b.WriteString("bool(" + strconv.FormatBool(x) + ")\n")
		}
	}
	return []byte(b.String())
}

// makeFuzzCorpus writes seed corpora for every fuzz target into dir (the
// package's testdata/fuzz) from the fixtures in fixtures.
func makeFuzzCorpus(dir, fixtures string) error {
	write := func(target, name string, values ...any) error {
		d := filepath.Join(dir, target)
		if err := os.MkdirAll(d, 0o755); err != nil {
			return err
		}
		return os.WriteFile(filepath.Join(d, name), corpusFile(values...), 0o644)
	}
	var paths []string
	for _, sub := range []string{"", "bad"} {
		entries, err := os.ReadDir(filepath.Join(fixtures, sub))
		if err != nil {
			return err
		}
		for _, e := range entries {
			if !e.IsDir() {
				paths = append(paths, filepath.Join(sub, e.Name()))
			}
		}
	}
	for _, p := range paths {
		data, err := os.ReadFile(filepath.Join(fixtures, p))
		if err != nil {
			return err
		}
		name := strings.NewReplacer("/", "_", ".", "_").Replace(p)
		ext := filepath.Ext(p)
		if err := write("FuzzDecode", name, data, ext); err != nil {
			return err
		}
		switch {
		case ext == ".wav":
			err = write("FuzzWAV", name, data)
		case ext == ".csv" || ext == ".tsv" || ext == ".txt":
			err = write("FuzzCSV", name, data)
		case ext == ".bin" || ext == ".raw":
			err = write("FuzzRaw", name, data, uint8(2), uint8(3), uint16(0), true, false)
			if err == nil {
				err = write("FuzzRaw", name+"_planar_be", data, uint8(3), uint8(2), uint16(32), false, true)
			}
		}
		if err != nil {
			return err
		}
	}
	return nil
}
