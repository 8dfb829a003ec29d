package decode_test

import (
	"bytes"
	"fmt"
	"image"
	"image/png"

	"tracelift/imageproc/decode"
)

// A PNG scan is decoded from memory; its pHYs chunk says 11811 pixels per
// metre, which is 300 dpi.
func ExampleReader() {
	var buf bytes.Buffer
	png.Encode(&buf, image.NewGray(image.Rect(0, 0, 40, 30)))
	b := buf.Bytes()
	// Insert a pHYs chunk after IHDR (8-byte signature + 25-byte IHDR).
	phys := []byte{0, 0, 0, 9, 'p', 'H', 'Y', 's', 0, 0, 0x2e, 0x23, 0, 0, 0x2e, 0x23, 1, 0x78, 0xa5, 0x3f, 0x76}
	scan := append(append(append([]byte{}, b[:33]...), phys...), b[33:]...)

	pages, err := decode.Reader(bytes.NewReader(scan), int64(len(scan)), "scan.png", nil)
	if err != nil {
		fmt.Println(err)
		return
	}
	p := pages[0]
	fmt.Printf("%s page %d: %v, %.0f × %.0f dpi, orientation %d\n", p.Format, p.Index, p.Image.Bounds().Size(), p.DPIX, p.DPIY, p.Orientation)
	// Output: png page 1: (40,30), 300 × 300 dpi, orientation 1
}

// Errors name the file and match ecg.ErrUnreadable.
func ExampleFile() {
	_, err := decode.File("no-such-scan.png", nil)
	fmt.Println(err)
	// Output: no-such-scan.png: cannot open: no such file or directory
}
