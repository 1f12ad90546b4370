package export

// The numbers of the two file formats, named as their specifications name
// them, with the section beside each so the code can be checked against the
// standard line by line.
//
// TIFF: "TIFF Revision 6.0", Adobe Developers Association, 3 June 1992,
// and for Deflate the "Adobe Photoshop TIFF Technical Notes" (2002).
// PNG: "Portable Network Graphics (PNG) Specification (Second Edition)",
// W3C Recommendation 10 November 2003 = ISO/IEC 15948:2003.

// TIFF header (TIFF 6.0 Section 2, "Image File Header").
const (
	tiffByteOrderLittle = "II" // bytes 0-1: little-endian ("Intel") byte order
	tiffMagic           = 42   // bytes 2-3: the number that identifies a TIFF file
	tiffHeaderSize      = 8    // byte order, 42, offset of the 0th IFD
	tiffEntrySize       = 12   // one IFD entry: tag, type, count, value/offset
)

// TIFF field types (TIFF 6.0 Section 2, "IFD Entry", Types).
const (
	typeASCII    = 2  // 8-bit bytes holding 7-bit ASCII, the last byte NUL
	typeSHORT    = 3  // 16-bit unsigned integer
	typeLONG     = 4  // 32-bit unsigned integer
	typeRATIONAL = 5  // two LONGs: numerator, denominator
	typeFLOAT    = 11 // IEEE single precision (4 bytes)
)

// TIFF tags.
const (
	tagNewSubfileType            = 254 // Section 8 (Baseline Field Reference Guide)
	tagImageWidth                = 256 // Section 8
	tagImageLength               = 257 // Section 8
	tagBitsPerSample             = 258 // Section 8; Section 4 (grayscale)
	tagCompression               = 259 // Section 8
	tagPhotometricInterpretation = 262 // Section 8; Section 4
	tagImageDescription          = 270 // Section 8
	tagStripOffsets              = 273 // Section 8
	tagOrientation               = 274 // Section 8
	tagSamplesPerPixel           = 277 // Section 8
	tagRowsPerStrip              = 278 // Section 8
	tagStripByteCounts           = 279 // Section 8
	tagXResolution               = 282 // Section 8
	tagYResolution               = 283 // Section 8
	tagPlanarConfiguration       = 284 // Section 8
	tagPageName                  = 285 // Section 12 (Document Storage and Retrieval)
	tagResolutionUnit            = 296 // Section 8
	tagPageNumber                = 297 // Section 12
	tagSoftware                  = 305 // Section 8
	tagDateTime                  = 306 // Section 8: "YYYY:MM:DD HH:MM:SS", 20 bytes with the NUL
	tagSampleFormat              = 339 // Section 19 (Data Sample Format)
	tagSMinSampleValue           = 340 // Section 19: least sample value, in the samples' own type
	tagSMaxSampleValue           = 341 // Section 19: greatest sample value
)

// TIFF field values.
const (
	subfilePageOfMany = 2 // NewSubfileType bit 1: one page of a multi-page image (Section 8)

	compressionNone    = 1 // Section 8 (Compression = 1, no compression)
	compressionLZW     = 5 // Section 13 (LZW Compression)
	compressionDeflate = 8 // Adobe Photoshop TIFF Technical Notes, "Deflate Compression" (zlib, RFC 1950)

	photometricBlackIsZero = 1 // Section 4 / Section 8: 0 is imaged as black

	orientationTopLeft = 1 // Section 8: row 0 at the top, column 0 at the left

	planarChunky = 1 // Section 8: PlanarConfiguration 1 (one sample per pixel here)

	resolutionUnitCentimeter = 3 // Section 8: ResolutionUnit 3 = centimetre

	sampleFormatUInt   = 1 // Section 19: unsigned integer data
	sampleFormatIEEEFP = 3 // Section 19: IEEE floating point data (IEEE 754)
)

// TIFF LZW codes (TIFF 6.0 Section 13).
const (
	lzwClearCode = 256  // resets the string table
	lzwEOICode   = 257  // EndOfInformation, ends each strip
	lzwFirstCode = 258  // first code of a multi-byte string
	lzwMaxWidth  = 12   // codes are 9 to 12 bits wide
	lzwTableFull = 4094 // the encoder writes Clear before the table passes 4094 entries
)

// tiffMaxFileSize is the largest file a classic TIFF can address: offsets
// are 32-bit LONGs (TIFF 6.0 Section 2).
const tiffMaxFileSize = 1<<32 - 1

// PNG numbers.
const (
	pngSignature = "\x89PNG\r\n\x1a\n" // §5.2 PNG signature
	pngIHDRSize  = 13                  // §11.2.2 IHDR data length
	pngChunkIHDR = "IHDR"              // §11.2.2 image header
	pngChunkPHYs = "pHYs"              // §11.3.5.3 physical pixel dimensions
	pngChunkTEXt = "tEXt"              // §11.3.4.3 textual data (Latin-1)
	pngUnitMetre = 1                   // §11.3.5.3 pHYs unit specifier 1 = the metre

	pngKeywordMaxLen = 79 // §11.3.4.2: keywords are 1 to 79 bytes
)

// Keywords of the tEXt chunks. "Software", "Description" and
// "Creation Time" are predefined keywords (PNG §11.3.4.2); the two
// "spotloom-" keywords are our own, within the same rules (Latin-1
// printable characters, no leading, trailing or double spaces).
const (
	keywordSoftware     = "Software"
	keywordDescription  = "Description"
	keywordCreationTime = "Creation Time"
	keywordRecipe       = "spotloom-recipe"
	keywordReport       = "spotloom-report"
)
