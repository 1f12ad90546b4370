package capture

import (
	"io"
)

func readCSV(r io.ReaderAt, size int64, opts Options) (*Recording, error) {
	return nil, &UnsupportedError{Format: "csv", Place: wholeFile, Feature: "CSV", Expected: "WAV or raw for now"}
}
