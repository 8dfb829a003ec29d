package imageproc

import (
	"errors"
	"image"
	"math"
	"math/rand/v2"
	"testing"

	"tracelift/ecg"
)

func TestPrepareSkew(t *testing.T) {
	for _, tc := range []struct {
		name string
		deg  float64
		grey bool
	}{
		{"pink 0", 0, false},
		{"pink +3.3", 3.3, false},
		{"pink -7.85", -7.85, false},
		{"grey +9.6", 9.6, true},
		{"grey -1.27", -1.27, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := rotatedSheet(110, 70, 6, tc.deg)
			if tc.grey {
				s.grid = [3]uint8{170, 170, 170}
			}
			p, err := Prepare(s.draw(), nil)
			if err != nil {
				t.Fatal(err)
			}
			// Requirement: skew within 0.1° for skews up to 10°.
			if d := math.Abs(p.RotationDeg - tc.deg); d > 0.1 {
				t.Errorf("skew %.3f°, want %.3f° (error %.3f°)", p.RotationDeg, tc.deg, d)
			}
			if p.QuarterTurns != 0 {
				t.Errorf("quarter turns %d, want 0", p.QuarterTurns)
			}
			want := "pink"
			if tc.grey {
				want = "grey"
			}
			if p.GridColor != want {
				t.Errorf("grid colour %q, want %q", p.GridColor, want)
			}
		})
	}
}

func TestPrepareBlankAndTexture(t *testing.T) {
	blankImg := image.NewGray(image.Rect(0, 0, 800, 600))
	for i := range blankImg.Pix {
		blankImg.Pix[i] = 250
	}
	if _, err := Prepare(blankImg, nil); !errors.Is(err, ecg.ErrNoECG) {
		t.Errorf("blank page: err %v, want ErrNoECG", err)
	}
	if _, err := Prepare(image.NewGray(image.Rect(0, 0, 4, 4)), nil); !errors.Is(err, ecg.ErrUnreadable) {
		t.Errorf("tiny image: err %v, want ErrUnreadable", err)
	}
}

// texture is a photo-like random image: smooth blobs of colour plus noise.
func texture(w, h int, seed uint64) *image.NRGBA {
	r := rand.New(rand.NewPCG(seed, seed))
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	type blob struct {
		x, y, s float64
		c       [3]float64
	}
	var bs []blob
	for i := 0; i < 30; i++ {
		bs = append(bs, blob{r.Float64() * float64(w), r.Float64() * float64(h), 20 + r.Float64()*150,
			[3]float64{r.Float64() * 255, r.Float64() * 255, r.Float64() * 255}})
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var c [3]float64
			ws := 1e-9
			for _, b := range bs {
				d := math.Hypot(float64(x)-b.x, float64(y)-b.y) / b.s
				wt := math.Exp(-d * d)
				ws += wt
				for k := range c {
					c[k] += wt * b.c[k]
				}
			}
			i := y*img.Stride + 4*x
			for k := range c {
				img.Pix[i+k] = clamp8(float32(c[k]/ws + r.NormFloat64()*12))
			}
			img.Pix[i+3] = 255
		}
	}
	return img
}
