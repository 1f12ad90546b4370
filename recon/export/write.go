package export

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"image/draw"
	"image/png"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"
	"unicode/utf16"

	"spotloom/recon"
	"spotloom/recon/measure"
	"spotloom/recon/recipe"
)

// Options says how frames are written.
type Options struct {
	// Depth is the bits per sample: 8 or 16 (tone-mapped, TIFF or PNG) or
	// 32 (raw IEEE float frame values, TIFF only). 0 means 32 when Raw is
	// set, else 16.
	Depth int
	// Tone maps frame values to 8 or 16 bits. A Window of 0 takes window
	// and level from recon.AutoTone of each frame (keeping Gamma and
	// Invert); a Gamma of 0 means 1. So the zero Tone is automatic.
	Tone recon.Tone
	// Raw writes the frame values themselves (32-bit float TIFF).
	Raw bool
	// NoData is written where a frame has no data: a frame value for
	// depth 32 (NaN is allowed), a brightness from 0 (black) to 1 (white)
	// for 8 and 16 bits.
	NoData float64
	// ScaleBarMM burns a scale bar of that length into 8- and 16-bit
	// exports: 0 = none, < 0 = a round length near a quarter of the width.
	ScaleBarMM float64
	// Caption is burned into the upper left of 8- and 16-bit exports.
	Caption string
	// Note, when set, is told what the export left out that was not
	// asked for in so many words: an automatic scale bar on a frame too
	// small for it and its label.
	Note func(string)
	// Force replaces an existing file (and its sidecar).
	Force bool
	// Compression of TIFF strips: "none" (or ""), "deflate" or "lzw". For
	// PNG, which always deflates, "none" stores without compressing.
	Compression string
	// Also are further files written with the export, all or none of
	// them, such as the build report: if any cannot be written, neither
	// is the image nor its sidecar, and what was there stays.
	Also []File
	// Measurements are written into the sidecar as its "measurements"
	// list, so the frame can be measured again the same way. nil keeps
	// the list of a sidecar of the same recipe already there; an empty
	// list writes none.
	Measurements []measure.Shape
}

// ErrExists is returned (wrapped, with the path) when the output or its
// sidecar exists and Options.Force is not set.
var ErrExists = errors.New("already exists")

// Software is written into the Software tag, the PNG "Software" text and
// the sidecar.
const Software = "Spotloom"

// SidecarPath returns the sidecar of an export: path without its
// extension, plus ".recipe.json".
func SidecarPath(path string) string {
	return strings.TrimSuffix(path, filepath.Ext(path)) + ".recipe.json"
}

// Write writes frames to path in the format its extension names (.tif,
// .tiff: one page per frame; .png: one frame) and the sidecar beside it.
// Both (and Options.Also) are written to temporary files in the same
// folder, synced and then renamed into place, so a failure leaves neither
// a partial file nor a leftover temporary file, and a forced write that
// fails leaves the previous files as they were.
//
// A TIFF and a PNG of one base name share the sidecar: when it holds the
// same recipe, the new export is added to its list of exports; when it
// holds another recipe, the write is refused (ErrExists) unless Force.
func Write(path string, frames []*recon.Frame, opts Options) error {
	return write(context.Background(), path, frames, opts, time.Now(), nil)
}

// WriteContext is Write stopped by cancelling ctx: it returns ctx's error
// and leaves nothing behind.
func WriteContext(ctx context.Context, path string, frames []*recon.Frame, opts Options) error {
	return write(ctx, path, frames, opts, time.Now(), nil)
}

// fileFormat is the container chosen from the extension.
type fileFormat int

const (
	formatTIFF fileFormat = iota
	formatPNG
)

// settings are Options checked and resolved against the format.
type settings struct {
	format      fileFormat
	depth       int
	compression string
	tiffCode    uint16
	pngLevel    png.CompressionLevel
}

// Check reports whether opts can be written to path, without any frame:
// the extension names a format, the depth and compression suit it, the
// folders of the file and of Options.Also exist and take files, no output
// is another, and unless Force is set none of them is there (ErrExists) but
// a sidecar that may be shared. Callers use it to refuse bad settings
// before a long build; Write checks everything again.
func Check(path string, opts Options) error {
	if _, err := resolveOptions(path, opts); err != nil {
		return err
	}
	return checkDestination(path, opts)
}

// CheckSidecar reports whether an export made from r may go to path:
// unless force, a sidecar there must hold r itself (its exports are then
// listed together) or be absent. Callers check it as soon as the recipe is
// resolved, before the long part of a build.
func CheckSidecar(path string, r recipe.Recipe, force bool) error {
	_, _, err := earlierExports(path, r, force)
	return err
}

func resolve(path string, frames []*recon.Frame, opts Options) (settings, error) {
	if len(frames) == 0 {
		return settings{}, fmt.Errorf("%s: no frame to write", path)
	}
	for i, f := range frames {
		if err := checkFrame(f); err != nil {
			return settings{}, fmt.Errorf("%s: frame %d: %w", path, i+1, err)
		}
	}
	s, err := resolveOptions(path, opts)
	if err != nil {
		return s, err
	}
	if s.format == formatPNG && len(frames) > 1 {
		return s, fmt.Errorf("%s: a PNG holds one frame and there are %d (one per stroke): write a .tiff, which keeps each as a page, or set rows.strokes to merge or first", path, len(frames))
	}
	return s, nil
}

func resolveOptions(path string, opts Options) (settings, error) {
	var s settings
	switch ext := strings.ToLower(filepath.Ext(path)); ext {
	case ".tif", ".tiff":
		s.format = formatTIFF
	case ".png":
		s.format = formatPNG
	case "":
		return s, fmt.Errorf("%s has no extension: name it .tiff, .tif or .png to choose the format", path)
	default:
		return s, fmt.Errorf("%s: unknown extension %q: use .tiff, .tif or .png", path, ext)
	}
	s.depth = opts.Depth
	if s.depth == 0 {
		s.depth = 16
		if opts.Raw {
			s.depth = 32
		}
	}
	switch s.depth {
	case 8, 16, 32:
	default:
		return s, fmt.Errorf("%s: depth %d is not written: choose 8 or 16 (tone-mapped) or 32 (raw float, TIFF)", path, s.depth)
	}
	if opts.Raw && s.depth != 32 {
		return s, fmt.Errorf("%s: raw frame values need depth 32 (float), not %d", path, s.depth)
	}
	if s.depth == 32 {
		if s.format == formatPNG {
			return s, fmt.Errorf("%s: PNG holds at most 16 bits per gray sample (PNG §11.2.2): use .tiff for 32-bit float, or depth 8 or 16", path)
		}
		if opts.ScaleBarMM != 0 || opts.Caption != "" {
			return s, fmt.Errorf("%s: a scale bar or caption would overwrite measured values in a 32-bit float export: use depth 8 or 16 for a report image", path)
		}
	} else if !(opts.NoData >= 0 && opts.NoData <= 1) {
		return s, fmt.Errorf("%s: no-data brightness %g is outside 0 (black) … 1 (white)", path, opts.NoData)
	}
	if err := measure.CheckList(opts.Measurements); err != nil {
		return s, fmt.Errorf("%s: the measurements: %w", path, err)
	}
	for _, v := range []float64{opts.Tone.Window, opts.Tone.Level, opts.Tone.Gamma} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return s, fmt.Errorf("%s: tone window %g, level %g, gamma %g: each must be a finite number", path, opts.Tone.Window, opts.Tone.Level, opts.Tone.Gamma)
		}
	}
	if math.IsNaN(opts.ScaleBarMM) || math.IsInf(opts.ScaleBarMM, 0) {
		return s, fmt.Errorf("%s: scale bar length %g mm is not a number", path, opts.ScaleBarMM)
	}
	s.compression = strings.ToLower(opts.Compression)
	switch {
	case s.format == formatTIFF && (s.compression == "" || s.compression == "none"):
		s.compression, s.tiffCode = "none", compressionNone
	case s.format == formatTIFF && s.compression == "deflate":
		s.tiffCode = compressionDeflate
	case s.format == formatTIFF && s.compression == "lzw":
		s.tiffCode = compressionLZW
	case s.format == formatPNG && (s.compression == "" || s.compression == "deflate"):
		s.compression, s.pngLevel = "deflate", png.DefaultCompression
	case s.format == formatPNG && s.compression == "none":
		s.pngLevel = png.NoCompression
	default:
		allowed := "none, deflate or lzw"
		if s.format == formatPNG {
			allowed = "deflate or none"
		}
		return s, fmt.Errorf("%s: compression %q is not written for this format: choose %s", path, opts.Compression, allowed)
	}
	return s, nil
}

func checkFrame(f *recon.Frame) error {
	switch {
	case f == nil:
		return errors.New("the frame is missing (nil)")
	case f.Width <= 0 || f.Height <= 0:
		return fmt.Errorf("the frame is %d×%d pixels: nothing to write", f.Width, f.Height)
	case f.Width > math.MaxUint32/4 || f.Height > math.MaxUint32 || f.Width > math.MaxInt/f.Height:
		return fmt.Errorf("the frame is %d×%d pixels: too large for a TIFF or PNG", f.Width, f.Height)
	case len(f.Pix) != f.Width*f.Height || len(f.Covered) != f.Width*f.Height:
		return fmt.Errorf("the frame is %d×%d but holds %d values and %d coverage flags", f.Width, f.Height, len(f.Pix), len(f.Covered))
	case !(f.PitchXMM > 0) || !(f.PitchYMM > 0) || math.IsInf(f.PitchXMM, 0) || math.IsInf(f.PitchYMM, 0):
		return fmt.Errorf("the pitch is %g × %g mm; it must be positive", f.PitchXMM, f.PitchYMM)
	}
	return nil
}

// checkDestination: the folders exist and take files, no output is a
// folder or another output and, without force, none exists but a sidecar
// (whose recipe decides once it is known).
func checkDestination(path string, opts Options) error {
	sidecar := SidecarPath(path)
	outputs := []Role{{What: "the export", Path: path}, {What: "its sidecar", Path: sidecar}}
	for _, a := range opts.Also {
		outputs = append(outputs, Role{What: "the file", Path: a.Path})
	}
	if err := CheckClashes(nil, outputs); err != nil {
		return err
	}
	if err := checkFolder(path); err != nil {
		return err
	}
	for _, p := range []string{path, sidecar} {
		if st, err := os.Stat(p); err == nil && st.IsDir() {
			return folderError(p, path)
		}
	}
	for _, a := range opts.Also {
		if err := CheckFile(a.Path, opts.Force); err != nil {
			return err
		}
	}
	if opts.Force {
		return nil
	}
	if _, err := os.Lstat(path); err == nil {
		return fmt.Errorf("%s %w", path, ErrExists)
	}
	if data, err := os.ReadFile(sidecar); err == nil {
		if _, ok := parseSidecar(data); !ok {
			return fmt.Errorf("%s (the sidecar %s would write) %w", sidecar, filepath.Base(path), ErrExists)
		}
	}
	return nil
}

// page is one frame ready for a container.
type page struct {
	frame      *recon.Frame
	image      draw.Image // nil for raw float
	tone       recon.Tone
	scaleBarMM float64
}

// write is Write with the clock and the file writer injectable, so tests
// can stamp a fixed time and make a write fail part way.
func write(ctx context.Context, path string, frames []*recon.Frame, opts Options, now time.Time, wrap func(io.Writer) io.Writer) error {
	s, err := resolve(path, frames, opts)
	if err != nil {
		return err
	}
	if err := checkDestination(path, opts); err != nil {
		return err
	}
	sidecar := SidecarPath(path)

	pages := make([]page, len(frames))
	for i, f := range frames {
		pages[i].frame = f
		if s.depth == 32 {
			continue
		}
		tone := opts.Tone
		if tone.Window == 0 {
			auto := recon.AutoTone(f)
			tone.Window, tone.Level = auto.Window, auto.Level
		}
		if tone.Gamma == 0 {
			tone.Gamma = 1
		}
		img := toneImage(f, tone, s.depth, opts.NoData)
		bar, err := overlay(img, f, opts.ScaleBarMM, opts.Caption)
		if err != nil {
			return fmt.Errorf("%s: frame %d: %w", path, i+1, err)
		}
		if opts.ScaleBarMM < 0 && bar == 0 && opts.Note != nil {
			opts.Note(fmt.Sprintf("frame %d (%d × %d px) is too small for a scale bar and its label: none drawn", i+1, f.Width, f.Height))
		}
		pages[i] = page{frame: f, image: img, tone: tone, scaleBarMM: bar}
	}

	recipeJSON := asciiJSON(frames[0].Recipe.JSON())
	encode := func(w io.Writer) error {
		if s.format == formatPNG {
			return writePNG(w, pages[0], recipeJSON, opts.Caption, now, s.pngLevel)
		}
		return writeTIFF(w, pages, recipeJSON, s, opts.NoData, now)
	}
	outputs := []string{path, sidecar}
	for _, a := range opts.Also {
		outputs = append(outputs, a.Path)
	}
	return withLocks(ctx, outputs, func() error {
		// Under the locks, the sidecar now there decides what the new one
		// lists.
		earlier, measured, err := earlierExports(path, frames[0].Recipe, opts.Force)
		if err != nil {
			return err
		}
		if opts.Measurements != nil {
			measured = nil
			if len(opts.Measurements) > 0 {
				if measured, err = json.Marshal(opts.Measurements); err != nil {
					return err
				}
			}
		}
		sidecarJSON, err := sidecarBytes(path, pages, s, opts, now, recipeJSON, earlier, measured)
		if err != nil {
			return fmt.Errorf("%s: %w", sidecar, err)
		}
		files := []pendingFile{
			{path: path, encode: encode, replace: opts.Force},
			// earlierExports has refused a sidecar that may not be replaced.
			{path: sidecar, encode: File{Data: sidecarJSON}.encoder(), replace: true},
		}
		for _, a := range opts.Also {
			files = append(files, pendingFile{path: a.Path, encode: a.encoder(), replace: opts.Force})
		}
		return placeFiles(ctx, files, wrap)
	})
}

func writeTIFF(w io.Writer, pages []page, recipeJSON []byte, s settings, noData float64, now time.Time) error {
	tp := make([]tiffPage, len(pages))
	for i, p := range pages {
		f := p.frame
		t := tiffPage{
			width: f.Width, height: f.Height, bitsPerSample: s.depth,
			sampleFormat: sampleFormatUInt,
			pixelsPerCMX: 10 / f.PitchXMM, pixelsPerCMY: 10 / f.PitchYMM,
			description: string(recipeJSON),
		}
		if s.depth == 32 {
			t.sampleFormat = sampleFormatIEEEFP
			t.samples = floatSamples(f, noData)
			t.valueRange = valueRange(f)
		} else {
			t.samples = tiffSamples(p.image)
		}
		if len(pages) > 1 {
			t.pageName = fmt.Sprintf("stroke %d", f.Stroke+1)
		}
		tp[i] = t
	}
	return encodeTIFF(w, tp, tiffFile{compression: s.tiffCode, software: Software, created: now})
}

// valueRange is the least and greatest finite value of the covered
// pixels, or nil when there is none.
func valueRange(f *recon.Frame) *[2]float32 {
	var r *[2]float32
	for i, v := range f.Pix {
		if !f.Covered[i] || math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			continue
		}
		if r == nil {
			r = &[2]float32{v, v}
		}
		r[0], r[1] = min(r[0], v), max(r[1], v)
	}
	return r
}

func writePNG(w io.Writer, p page, recipeJSON []byte, caption string, now time.Time, level png.CompressionLevel) error {
	f := p.frame
	ppmX, err := pixelsPerMetre(f.PitchXMM)
	if err != nil {
		return err
	}
	ppmY, err := pixelsPerMetre(f.PitchYMM)
	if err != nil {
		return err
	}
	report, err := json.MarshalIndent(f.Report, "", "  ")
	if err != nil {
		return fmt.Errorf("the build report: %w", err)
	}
	desc := fmt.Sprintf("Frame of %d x %d pixels at %s x %s mm pitch: %s x %s mm.",
		f.Width, f.Height, fmtMM(f.PitchXMM), fmtMM(f.PitchYMM),
		fmtMM(float64(f.Width)*f.PitchXMM), fmtMM(float64(f.Height)*f.PitchYMM))
	if caption != "" {
		desc += " " + caption
	}
	texts := []pngText{
		{keywordSoftware, Software},
		{keywordDescription, latin1Lossy(desc)},
		{keywordCreationTime, now.UTC().Format(time.RFC1123Z)},
		{keywordRecipe, string(recipeJSON)},
		{keywordReport, string(asciiJSON(report))},
	}
	return encodePNG(w, p.image, ppmX, ppmY, texts, level)
}

// pixelsPerMetre is the pHYs value for a pitch: 1000 / pitch in mm,
// rounded (PNG §11.3.5.3 stores whole pixels per unit).
func pixelsPerMetre(pitchMM float64) (uint32, error) {
	v := math.Round(1000 / pitchMM)
	if !(v >= 1) || v > math.MaxUint32 {
		return 0, fmt.Errorf("a %g mm pitch is %g pixels per metre, which pHYs cannot hold (1 … 2^32−1)", pitchMM, 1000/pitchMM)
	}
	return uint32(v), nil
}

func fmtMM(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }

// latin1Lossy replaces characters outside Latin-1 with '?', for the free
// text of the description.
func latin1Lossy(s string) string {
	return strings.Map(func(r rune) rune {
		if r > 0xff || r == 0 {
			return '?'
		}
		return r
	}, s)
}

// asciiJSON escapes every non-ASCII character of a JSON text as \uXXXX
// (a surrogate pair above U+FFFF, RFC 8259 §7). Outside strings JSON is
// ASCII already, so the result is the same JSON value in 7-bit bytes, as
// the TIFF ASCII type requires (TIFF 6.0 Section 2).
func asciiJSON(b []byte) []byte {
	ascii := true
	for _, c := range b {
		if c >= 0x80 {
			ascii = false
			break
		}
	}
	if ascii {
		return b
	}
	var out []byte
	for _, r := range string(b) {
		if r < 0x80 {
			out = append(out, byte(r))
			continue
		}
		if r > 0xffff {
			hi, lo := utf16.EncodeRune(r)
			out = fmt.Appendf(out, `\u%04x\u%04x`, hi, lo)
			continue
		}
		out = fmt.Appendf(out, `\u%04x`, r)
	}
	return out
}

// sidecarFile is the JSON beside every export.
type sidecarFile struct {
	Format   string          `json:"format"`
	File     string          `json:"file"`
	Software string          `json:"software"`
	Written  string          `json:"written"`
	Export   sidecarExport   `json:"export"`
	Pages    []sidecarPage   `json:"pages"`
	Recipe   json.RawMessage `json:"recipe"`
	Report   recon.Report    `json:"report"`
	// Exports lists every file made from the recipe under this base name,
	// the one above (File, Export, Pages) last.
	Exports []sidecarEntry `json:"exports"`
	// Measurements are the shapes measured on the frame, in its mm
	// (measure.Shape; measure.ParseList reads them). Kept as written, so
	// a list edited by hand never makes the sidecar unreadable here.
	Measurements json.RawMessage `json:"measurements,omitempty"`
}

// sidecarEntry is one export listed in a sidecar.
type sidecarEntry struct {
	File        string        `json:"file"`
	Format      string        `json:"format"` // "tiff" or "png"
	Depth       int           `json:"depth"`
	Compression string        `json:"compression"`
	Tone        []sidecarTone `json:"tone,omitempty"` // one per page; none for raw values
	Written     string        `json:"written"`
}

// parseSidecar reads a sidecar; ok is false for anything else.
func parseSidecar(data []byte) (sc sidecarFile, ok bool) {
	if json.Unmarshal(data, &sc) != nil || sc.Format != SidecarFormat || len(sc.Recipe) == 0 {
		return sc, false
	}
	return sc, true
}

// exports lists the sidecar's exports; a sidecar written before the list
// existed names its one export in File.
func (sc sidecarFile) exports() []sidecarEntry {
	if len(sc.Exports) > 0 || sc.File == "" {
		return sc.Exports
	}
	e := sidecarEntry{File: sc.File, Format: formatName(sc.File), Depth: sc.Export.Depth,
		Compression: sc.Export.Compression, Written: sc.Written}
	for _, p := range sc.Pages {
		if p.Tone != nil {
			e.Tone = append(e.Tone, *p.Tone)
		}
	}
	return []sidecarEntry{e}
}

// formatName is "png" or "tiff" for an export's file name.
func formatName(file string) string {
	if strings.EqualFold(filepath.Ext(file), ".png") {
		return "png"
	}
	return "tiff"
}

// otherRecipeError refuses to replace a sidecar that holds the recipe of
// other exports.
type otherRecipeError struct {
	sidecar, file string
	others        []string
}

func (e otherRecipeError) Error() string {
	made := "an earlier export"
	if len(e.others) > 0 {
		made = strings.Join(e.others, " and ")
	}
	return fmt.Sprintf("%s holds another recipe, the one %s was made from, not that of this %s", e.sidecar, made, e.file)
}

// Is makes the refusal an ErrExists: the sidecar is there and would be
// replaced.
func (e otherRecipeError) Is(target error) bool { return target == ErrExists }

// earlierExports are the exports the sidecar of path lists that the new
// one keeps: those of the same recipe, but not path itself, and the
// sidecar's measurements. A sidecar of another recipe, or a file there
// that is not a sidecar, is refused unless force, and then replaced.
func earlierExports(path string, r recipe.Recipe, force bool) ([]sidecarEntry, json.RawMessage, error) {
	sidecar := SidecarPath(path)
	data, err := os.ReadFile(sidecar)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil, nil
	}
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", sidecar, err)
	}
	sc, ok := parseSidecar(data)
	if !ok {
		if force {
			return nil, nil, nil
		}
		return nil, nil, fmt.Errorf("%s (the sidecar %s would write) %w", sidecar, filepath.Base(path), ErrExists)
	}
	var keep []sidecarEntry
	var files []string
	for _, e := range sc.exports() {
		files = append(files, e.File)
		if e.File != filepath.Base(path) {
			keep = append(keep, e)
		}
	}
	if held, err := recipe.Parse(sc.Recipe); err != nil || !bytes.Equal(held.JSON(), r.JSON()) {
		if force {
			return nil, nil, nil
		}
		return nil, nil, otherRecipeError{sidecar: sidecar, file: filepath.Base(path), others: files}
	}
	return keep, sc.Measurements, nil
}

type sidecarExport struct {
	Depth       int    `json:"depth"`
	Raw         bool   `json:"raw"`
	Compression string `json:"compression"`
	NoData      any    `json:"no_data"` // a number, or "NaN"
	Caption     string `json:"caption,omitempty"`
}

type sidecarPage struct {
	Stroke     int          `json:"stroke"`
	Columns    int          `json:"columns"`
	Rows       int          `json:"rows"`
	PitchXMM   float64      `json:"pitch_x_mm"`
	PitchYMM   float64      `json:"pitch_y_mm"`
	OriginXMM  float64      `json:"origin_x_mm"`
	OriginYMM  float64      `json:"origin_y_mm"`
	WidthMM    float64      `json:"width_mm"`
	HeightMM   float64      `json:"height_mm"`
	Tone       *sidecarTone `json:"tone,omitempty"`
	ScaleBarMM float64      `json:"scale_bar_mm,omitempty"`
	Coverage   float64      `json:"coverage"`
}

type sidecarTone struct {
	Window float64 `json:"window"`
	Level  float64 `json:"level"`
	Gamma  float64 `json:"gamma"`
	Invert bool    `json:"invert"`
}

// SidecarFormat is the "format" value of every sidecar; recipe.Parse reads
// the recipe out of such a file.
const SidecarFormat = recipe.SidecarFormat

func sidecarBytes(path string, pages []page, s settings, opts Options, now time.Time, recipeJSON []byte, earlier []sidecarEntry, measured json.RawMessage) ([]byte, error) {
	var noData any = opts.NoData
	if math.IsNaN(opts.NoData) || math.IsInf(opts.NoData, 0) {
		noData = strconv.FormatFloat(opts.NoData, 'g', -1, 64)
	}
	sc := sidecarFile{
		Format: SidecarFormat, File: filepath.Base(path), Software: Software,
		Written: now.UTC().Format(time.RFC3339),
		Export: sidecarExport{Depth: s.depth, Raw: s.depth == 32, Compression: s.compression,
			NoData: noData, Caption: opts.Caption},
		Recipe:       recipeJSON,
		Report:       pages[0].frame.Report,
		Measurements: measured,
	}
	for _, p := range pages {
		f := p.frame
		covered := 0
		for _, c := range f.Covered {
			if c {
				covered++
			}
		}
		sp := sidecarPage{
			Stroke: f.Stroke, Columns: f.Width, Rows: f.Height,
			PitchXMM: f.PitchXMM, PitchYMM: f.PitchYMM, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM,
			WidthMM: float64(f.Width) * f.PitchXMM, HeightMM: float64(f.Height) * f.PitchYMM,
			ScaleBarMM: p.scaleBarMM,
			Coverage:   float64(covered) / float64(len(f.Covered)),
		}
		if p.image != nil {
			sp.Tone = &sidecarTone{p.tone.Window, p.tone.Level, p.tone.Gamma, p.tone.Invert}
		}
		sc.Pages = append(sc.Pages, sp)
	}
	this := sidecarEntry{File: sc.File, Format: formatName(path), Depth: s.depth, Compression: s.compression, Written: sc.Written}
	for _, p := range sc.Pages {
		if p.Tone != nil {
			this.Tone = append(this.Tone, *p.Tone)
		}
	}
	sc.Exports = append(slices.Clone(earlier), this)
	b, err := json.MarshalIndent(sc, "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}
