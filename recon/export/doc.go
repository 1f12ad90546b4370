// Package export writes reconstructed frames as calibrated image files
// that carry their millimetre scale and the recipe that made them, so a
// frame opens at its true size in ordinary image programs and can be
// rebuilt exactly.
//
// TIFF files follow TIFF 6.0 (Adobe, 1992), written by this package's own
// encoder: baseline grayscale at 8 or 16 bits, or raw frame values as
// 32-bit IEEE float (SampleFormat 3, Section 19); strips, uncompressed or
// compressed with LZW (Section 13, the TIFF variant: MSB-first codes and
// early change) or Deflate (zlib, RFC 1950; Compression 8 per the Adobe
// Photoshop TIFF Technical Notes); XResolution and YResolution as
// RATIONAL pixels per centimetre with ResolutionUnit 3; the recipe in
// ImageDescription; Software and DateTime; several frames as pages of one
// file (an IFD chain, with NewSubfileType, PageName and PageNumber of
// Section 12). Every tag number is in consts.go beside its section.
//
// PNG files are made by the standard library's encoder (8- or 16-bit
// gray) with chunks spliced in after IHDR: pHYs in pixels per metre
// (PNG, W3C 2003 / ISO/IEC 15948, §11.3.5.3) and tEXt chunks (§11.3.4.3)
// holding the software, a description, the creation time, the recipe and
// the build report.
//
// Tone-mapped exports use recon.Tone (window, level, gamma, invert) and
// may carry a burned-in scale bar of a round length (1, 2 or 5 × 10^k mm)
// and a caption, drawn with the Go fonts through golang.org/x/image/font.
//
// Every export gets a sidecar NAME.recipe.json with the recipe, the build
// report and the page geometry in millimetres; exports of one base name
// made from the same recipe share it, and it lists them all. Files are
// written to temporary files beside their final names, synced, and renamed
// into place only when all are complete, under a lock per name; an
// existing file is replaced only when asked, a failed write leaves
// nothing behind, and a failed forced write puts back what was there.
// CheckClashes refuses outputs that are inputs or each other, by file
// identity.
package export
