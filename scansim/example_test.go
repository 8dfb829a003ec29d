package scansim_test

import (
	"fmt"
	"image"

	"tracelift/scansim"
)

// Rotating a page enlarges the canvas to the rotated page plus a 2 % margin
// (400·cos 5° + 300·sin 5° ≈ 424.6 px wide, + 2 × 8.5); H tells where a
// printed point lands.
func ExampleApply() {
	page := image.NewGray(image.Rect(0, 0, 400, 300))
	out, H, err := scansim.Apply(page, scansim.Options{RotationDeg: 5})
	if err != nil {
		fmt.Println(err)
		return
	}
	x, y := scansim.Map(H, 200, 150) // the page centre
	fmt.Println(out.Bounds())
	fmt.Printf("centre → (%.1f, %.1f)\n", x, y)
	// Output:
	// (0,0)-(442,351)
	// centre → (220.8, 175.4)
}
