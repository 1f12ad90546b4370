// Package capture reads and writes the recordings Spotloom reconstructs
// from: the detector, index-pulse and position signals of a flying-spot
// scanner digitised by a sound card (RIFF/WAVE), an oscilloscope or logger
// (delimited text) or an ADC board (raw binary described by a layout).
//
// Open picks the reader by content and extension and returns a Recording
// with one float32 slice per channel. The WAV reader follows the RIFF/WAVE
// form of the Microsoft/IBM Multimedia Programming Interface and Data
// Specifications 1.0 (1991) and the WAVEFORMATEXTENSIBLE definition: it
// walks the chunks once itself (little-endian RIFF or big-endian RIFX),
// reads a data chunk that a stopped recorder never finished as far as the
// file goes, and converts the samples in bulk. github.com/go-audio/wav
// serves as an independent encoder for fixtures and decoder in tests. The CSV reader follows RFC
// 4180 for quoting and streams, so its memory is the float32 samples plus a
// read buffer. Besides plain exports it reads samples that sit beside
// columns of metadata, a sample counter with a start/increment pair, and
// sample intervals or rates stated in the preamble (csvmeta.go lists the
// key spellings). Every size written in a header is compared with the real
// size of the file before anything is allocated from it, and bad input
// gives a FormatError or UnsupportedError that names the file, the place
// (byte offset or line:column) and what was expected.
//
// WriteWAV, WriteCSV and WriteRaw write the same formats for the simulator
// and for test fixtures, and GuessRoles guesses from the signals alone which
// channel is the detector, the index pulse, the position or step pulses.
package capture
