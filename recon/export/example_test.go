package export_test

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"

	"spotloom/recon"
	"spotloom/recon/export"
	"spotloom/recon/recipe"
)

// A 400 × 300 frame at 0.25 mm pitch written as a 16-bit TIFF with a
// scale bar: the file says 40 pixels per centimetre, so image programs
// show it 100 mm × 75 mm, and the sidecar records the geometry.
func ExampleWrite() {
	dir, err := os.MkdirTemp("", "export-example")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)

	f := &recon.Frame{
		Width: 400, Height: 300, PitchXMM: 0.25, PitchYMM: 0.25,
		Pix: make([]float32, 400*300), Covered: make([]bool, 400*300),
		Recipe: recipe.Default(),
	}
	for i := range f.Pix {
		f.Pix[i], f.Covered[i] = float32(i%400)/400, true
	}
	path := filepath.Join(dir, "frame.tiff")
	opts := export.Options{Depth: 16, ScaleBarMM: -1, Compression: "deflate"}
	if err := export.Write(path, []*recon.Frame{f}, opts); err != nil {
		fmt.Println(err)
		return
	}
	data, err := os.ReadFile(export.SidecarPath(path))
	if err != nil {
		fmt.Println(err)
		return
	}
	var sidecar struct {
		Pages []struct {
			WidthMM    float64 `json:"width_mm"`
			HeightMM   float64 `json:"height_mm"`
			ScaleBarMM float64 `json:"scale_bar_mm"`
		} `json:"pages"`
	}
	if err := json.Unmarshal(data, &sidecar); err != nil {
		fmt.Println(err)
		return
	}
	p := sidecar.Pages[0]
	fmt.Printf("%s: %g × %g mm, scale bar %g mm\n", filepath.Base(path), p.WidthMM, p.HeightMM, p.ScaleBarMM)
	err = export.Write(path, []*recon.Frame{f}, opts)
	fmt.Println("again without Force:", err != nil)
	// Output:
	// frame.tiff: 100 × 75 mm, scale bar 20 mm
	// again without Force: true
}
