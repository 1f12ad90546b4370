package measure

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"

	"spotloom/internal/strictjson"
	"spotloom/recon"
)

// Kind says what one measurement of a list takes.
type Kind string

// The kinds of measurement a list holds.
const (
	KindEdge     Kind = "edge"     // a rectangle holding a slanted edge: the MTF
	KindRegion   Kind = "roi"      // a rectangle: mean, SD, SNR, and the CNR against another region
	KindNPS      Kind = "nps"      // a uniform rectangle: the noise power spectrum
	KindProfile  Kind = "profile"  // a line: the values along it and its length
	KindDistance Kind = "distance" // a line: its length
	KindDots     Kind = "dots"     // the whole frame: dot-grid geometry at a spacing
)

// Kinds lists every kind, in the order lists and menus show them.
var Kinds = []Kind{KindEdge, KindRegion, KindNPS, KindProfile, KindDistance, KindDots}

// prefix starts the labels of a kind: E1, R2, N1, P1, D1, G1.
func (k Kind) prefix() string {
	switch k {
	case KindEdge:
		return "E"
	case KindRegion:
		return "R"
	case KindNPS:
		return "N"
	case KindProfile:
		return "P"
	case KindDistance:
		return "D"
	case KindDots:
		return "G"
	}
	return "M"
}

// TakesRect and TakesLine say which geometry a kind is drawn with; the
// dot grid takes neither (only a spacing).
func (k Kind) TakesRect() bool { return k == KindEdge || k == KindRegion || k == KindNPS }

// TakesLine: see TakesRect.
func (k Kind) TakesLine() bool { return k == KindProfile || k == KindDistance }

func (k Kind) known() bool {
	for _, o := range Kinds {
		if k == o {
			return true
		}
	}
	return false
}

// Shape is one measurement of a list: its kind, a label that names it in
// the list, on the frame and on the report sheet, and where it is taken
// in the frame's mm (the coordinates of the pointer read-out). It is what
// the window draws, what a sidecar's "measurements" list holds and what
// "spotloom report --measure" reads.
type Shape struct {
	Kind  Kind   `json:"kind"`
	Label string `json:"label,omitempty"`
	Rect  *Rect  `json:"rect,omitempty"` // edge, roi, nps
	Line  *Line  `json:"line,omitempty"` // profile, distance
	// BandMM is the width a profile averages across (0: along the line).
	BandMM float64 `json:"band_mm,omitempty"`
	// SpacingMM is the nominal spacing of a dot grid.
	SpacingMM float64 `json:"spacing_mm,omitempty"`
	// CNRWith names another region of the list: a region then also
	// gives the contrast-to-noise ratio between the two.
	CNRWith string `json:"cnr_with,omitempty"`
}

// Clone copies s, its rectangle and line too.
func (s Shape) Clone() Shape {
	if s.Rect != nil {
		r := *s.Rect
		s.Rect = &r
	}
	if s.Line != nil {
		l := *s.Line
		s.Line = &l
	}
	return s
}

// CloneList copies every shape of list (nil stays nil).
func CloneList(list []Shape) []Shape {
	if list == nil {
		return nil
	}
	out := make([]Shape, len(list))
	for i, s := range list {
		out[i] = s.Clone()
	}
	return out
}

// SameList reports whether a and b hold the same shapes in the same order.
func SameList(a, b []Shape) bool {
	if len(a) == 0 && len(b) == 0 {
		return true
	}
	da, errA := json.Marshal(a)
	db, errB := json.Marshal(b)
	return errA == nil && errB == nil && bytes.Equal(da, db)
}

// NextLabel is the first free label for a new shape of kind k in list.
func NextLabel(list []Shape, k Kind) string {
	used := map[string]bool{}
	for _, s := range list {
		used[s.Label] = true
	}
	for n := 1; ; n++ {
		if l := k.prefix() + strconv.Itoa(n); !used[l] {
			return l
		}
	}
}

// finiteAll reports whether every value is a finite number.
func finiteAll(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

// check says what is wrong with one shape on its own.
func (s Shape) check() error {
	switch {
	case !s.Kind.known():
		return fmt.Errorf("kind %s is not one of %s", strictjson.Quote(string(s.Kind)), kindWords())
	case s.Kind.TakesRect() && s.Rect == nil:
		return fmt.Errorf("a %s needs a \"rect\" {x0_mm, y0_mm, x1_mm, y1_mm}", s.Kind)
	case s.Kind.TakesRect() && !finiteAll(s.Rect.X0, s.Rect.Y0, s.Rect.X1, s.Rect.Y1):
		return fmt.Errorf("the rectangle of a %s is not made of numbers", s.Kind)
	case s.Kind.TakesLine() && s.Line == nil:
		return fmt.Errorf("a %s needs a \"line\" {x0_mm, y0_mm, x1_mm, y1_mm}", s.Kind)
	case s.Kind.TakesLine() && !finiteAll(s.Line.X0, s.Line.Y0, s.Line.X1, s.Line.Y1):
		return fmt.Errorf("the line of a %s is not made of numbers", s.Kind)
	case s.Kind == KindDots && !(s.SpacingMM > 0 && !math.IsInf(s.SpacingMM, 0)):
		return fmt.Errorf("a dot grid needs its \"spacing_mm\" (more than 0), not %g", s.SpacingMM)
	case s.BandMM < 0 || !finiteAll(s.BandMM):
		return fmt.Errorf("band_mm %g: expected a width of 0 mm or more", s.BandMM)
	case s.BandMM > 0 && s.Kind != KindProfile:
		return fmt.Errorf("band_mm goes with a profile, not a %s", s.Kind)
	case s.CNRWith != "" && s.Kind != KindRegion:
		return fmt.Errorf("cnr_with goes with a roi, not a %s", s.Kind)
	}
	return nil
}

func kindWords() string {
	words := make([]string, len(Kinds))
	for i, k := range Kinds {
		words[i] = string(k)
	}
	return strings.Join(words, ", ")
}

// CheckList says what is wrong with a list: a shape that cannot be
// taken, a label given twice, or a cnr_with that names no other region.
// Shapes without a label are named by their place.
func CheckList(list []Shape) error {
	regions := map[string]bool{}
	seen := map[string]bool{}
	for _, s := range list {
		if s.Label == "" {
			continue
		}
		if seen[s.Label] {
			return fmt.Errorf("the label %s is given to two measurements", strictjson.Quote(s.Label))
		}
		seen[s.Label] = true
		if s.Kind == KindRegion {
			regions[s.Label] = true
		}
	}
	for i, s := range list {
		name := s.Label
		if name == "" {
			name = fmt.Sprintf("measurement %d", i+1)
		}
		if err := s.check(); err != nil {
			return fmt.Errorf("%s: %w", name, err)
		}
		if s.CNRWith != "" && (s.CNRWith == s.Label || !regions[s.CNRWith]) {
			return fmt.Errorf("%s: cnr_with %s names no other roi of the list", name, strictjson.Quote(s.CNRWith))
		}
	}
	return nil
}

// Labelled gives every shape without a label the next free one of its kind.
func Labelled(list []Shape) []Shape {
	out := CloneList(list)
	for i := range out {
		if out[i].Label == "" {
			out[i].Label = NextLabel(out, out[i].Kind)
		}
	}
	return out
}

// Request is what the measure command is asked for to take s: a shape of
// a list and "spotloom measure" with these flags give the same numbers.
// list resolves cnr_with.
func (s Shape) Request(list []Shape) (Request, error) {
	var q Request
	if err := s.check(); err != nil {
		return q, err
	}
	switch s.Kind {
	case KindEdge:
		q.Edge = s.Rect
	case KindRegion:
		q.ROI = s.Rect
		if s.CNRWith != "" {
			for _, o := range list {
				if o.Label == s.CNRWith && o.Kind == KindRegion && o.Rect != nil {
					q.ROI2 = o.Rect
				}
			}
			if q.ROI2 == nil {
				return q, fmt.Errorf("cnr_with %s names no roi of the list", strictjson.Quote(s.CNRWith))
			}
		}
	case KindNPS:
		q.NPS = s.Rect
	case KindProfile:
		q.Profile, q.BandMM = s.Line, s.BandMM
	case KindDots:
		q.DotsMM = s.SpacingMM
	}
	return q, nil
}

// Taken is one shape of a list measured on a frame: its results, or why
// it could not be taken.
type Taken struct {
	Shape   Shape
	Results Results
	Err     error
}

// RunShape takes one shape of list on f with Run, as the measure command
// does; a distance needs no frame data and is the length of its line.
func RunShape(f *recon.Frame, s Shape, list []Shape) (Results, error) {
	if s.Kind == KindDistance {
		if err := s.check(); err != nil {
			return Results{}, err
		}
		d := Distance(*s.Line)
		return Results{PitchXMM: f.PitchXMM, PitchYMM: f.PitchYMM, OriginXMM: f.OriginXMM, OriginYMM: f.OriginYMM, DistanceMM: &d}, nil
	}
	q, err := s.Request(list)
	if err != nil {
		return Results{}, err
	}
	return Run(f, q)
}

// RunList takes every shape of list on f.
func RunList(f *recon.Frame, list []Shape) []Taken {
	out := make([]Taken, len(list))
	for i, s := range list {
		res, err := RunShape(f, s, list)
		out[i] = Taken{Shape: s, Results: res, Err: err}
	}
	return out
}

// FromRequest turns what the measure command was asked for into a list:
// the edge E1, the regions R1 and R2 (R2 with its CNR against R1), the
// profile P1, the dot grid G1 and the spectrum N1.
func FromRequest(q Request) []Shape {
	var list []Shape
	if q.Edge != nil {
		list = append(list, Shape{Kind: KindEdge, Label: "E1", Rect: q.Edge})
	}
	if q.ROI != nil {
		list = append(list, Shape{Kind: KindRegion, Label: "R1", Rect: q.ROI})
		if q.ROI2 != nil {
			list = append(list, Shape{Kind: KindRegion, Label: "R2", Rect: q.ROI2, CNRWith: "R1"})
		}
	}
	if q.Profile != nil {
		list = append(list, Shape{Kind: KindProfile, Label: "P1", Line: q.Profile, BandMM: q.BandMM})
	}
	if q.DotsMM > 0 {
		list = append(list, Shape{Kind: KindDots, Label: "G1", SpacingMM: q.DotsMM})
	}
	if q.NPS != nil {
		list = append(list, Shape{Kind: KindNPS, Label: "N1", Rect: q.NPS})
	}
	return CloneList(list)
}

// ErrNoList is returned (wrapped) by ParseList for a file that holds no
// measurement list: a recipe, say, or a sidecar written without one.
var ErrNoList = errors.New("holds no measurements")

// ParseList reads a measurement list from any of the files that carry
// one: an export's sidecar or any JSON object with a "measurements" list, a bare JSON list of shapes, the
// output of "spotloom measure --json" (its "request") or a bare request.
// The shapes themselves are read strictly (an unknown key is an error);
// labels that are missing are filled in. name starts the messages.
func ParseList(data []byte, name string) ([]Shape, error) {
	data = bytes.TrimSpace(strictjson.TrimBOM(data))
	if len(data) > 0 && data[0] == '[' {
		return decodeShapes(data, name)
	}
	var top map[string]json.RawMessage
	if err := json.Unmarshal(data, &top); err != nil {
		return nil, fmt.Errorf("%s: not a JSON list of measurements: %w", name, err)
	}
	if m, ok := top["measurements"]; ok {
		if bytes.Equal(bytes.TrimSpace(m), []byte("null")) {
			return nil, fmt.Errorf("%s %w", name, ErrNoList)
		}
		return decodeShapes(m, name)
	}
	var q Request
	raw := data
	if r, ok := top["request"]; ok {
		raw = r
	} else if _, isFile := top["format"]; isFile {
		return nil, fmt.Errorf("%s %w", name, ErrNoList)
	}
	if _, err := strictjson.Decode(raw, &q, name+" (a measure request)"); err != nil {
		return nil, err
	}
	if q.Empty() {
		return nil, fmt.Errorf("%s asks for no measurement (no edge, roi, profile, dots or nps)", name)
	}
	return FromRequest(q), nil
}

func decodeShapes(data []byte, name string) ([]Shape, error) {
	var list []Shape
	if _, err := strictjson.Decode(data, &list, name+" (measurements)"); err != nil {
		return nil, err
	}
	if err := CheckList(list); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return Labelled(list), nil
}

// LoadList reads a measurement list from a file (see ParseList).
func LoadList(path string) ([]Shape, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseList(data, path)
}
