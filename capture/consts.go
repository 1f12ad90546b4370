package capture

// Numbers of the RIFF/WAVE format, named as the specifications name them.
//
// Sources: Microsoft/IBM, "Multimedia Programming Interface and Data
// Specifications 1.0", August 1991, chapter 3 "Resource Interchange File
// Format" (RIFF chunks, word alignment) and its WAVE form section (fmt and
// data chunks, PCM data packing); Microsoft, "Multiple Channel Audio Data and
// WAVE Files" (WAVEFORMATEXTENSIBLE, the KSDATAFORMAT_SUBTYPE GUIDs).
const (
	riffHeaderSize  = 12 // "RIFF", ckSize, "WAVE"                (RIFF 1.0, 3-3)
	chunkHeaderSize = 8  // ckID, ckSize                          (RIFF 1.0, 3-2)

	// fmt chunk layouts (WAVE form, <fmt-ck>).
	fmtPCMSize        = 16 // WAVEFORMAT + wBitsPerSample (PCMWAVEFORMAT)
	fmtExSize         = 18 // WAVEFORMATEX: + cbSize
	fmtExtensibleSize = 40 // WAVEFORMATEXTENSIBLE: cbSize = 22
	extensibleCbSize  = 22
	maxFmtSize        = 1 << 16 // no defined fmt chunk is near this; larger is damage

	waveFormatPCM        = 0x0001 // WAVE_FORMAT_PCM
	waveFormatIEEEFloat  = 0x0003 // WAVE_FORMAT_IEEE_FLOAT
	waveFormatExtensible = 0xFFFE // WAVE_FORMAT_EXTENSIBLE
)

// Chunk and form identifiers (four-character codes).
var (
	idRIFF = [4]byte{'R', 'I', 'F', 'F'}
	idWAVE = [4]byte{'W', 'A', 'V', 'E'}
	idFmt  = [4]byte{'f', 'm', 't', ' '}
	idData = [4]byte{'d', 'a', 't', 'a'}
	idFact = [4]byte{'f', 'a', 'c', 't'}
	idRIFX = [4]byte{'R', 'I', 'F', 'X'} // RIFF with every number big-endian
	idRF64 = [4]byte{'R', 'F', '6', '4'} // 64-bit RIFF (EBU Tech 3306), not read
)

// ksSubtypeTail is the last eight bytes, stored as written, of the
// KSDATAFORMAT_SUBTYPE GUIDs {0000XXXX-0000-0010-8000-00AA00389B71}, where
// XXXX is the format tag (1 for PCM, 3 for IEEE float); ksSubtype in wav.go
// puts the first three fields in the file's byte order.
var ksSubtypeTail = [8]byte{0x80, 0, 0, 0xAA, 0, 0x38, 0x9B, 0x71}

// maxPCMBits is the widest integer PCM sample read (an 8-byte container).
const maxPCMBits = 64

// Limits shared by every reader.
const (
	// MaxChannels is the most channels a WAV capture may have.
	MaxChannels = 16
	// MaxSampleRateHz is the highest sample rate accepted from a file; a
	// header above it is damaged rather than fast.
	MaxSampleRateHz = 1e10
	// MinSampleRateHz is the lowest sample rate accepted: a capture of a
	// scanner takes thousands of samples a second, and a rate like 1e-300
	// (a damaged header, a typing slip) would turn sample counts into
	// times beyond any clock.
	MinSampleRateHz = 1
	// maxWAVRateHz is the highest rate a WAV header may state: 100 MHz is
	// far beyond any sound card or WAV-writing ADC, so a higher field (such
	// as 0xFFFFFFFF) is damage.
	maxWAVRateHz = 1e8
)
