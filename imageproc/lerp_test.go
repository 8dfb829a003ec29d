package imageproc

import (
	"image/color"
	"math/rand/v2"
	"slices"
	"testing"
	"unsafe"
)

// TestLerpMatchesGo holds the vector kernels to the Go arithmetic bit for
// bit: random values over the whole stored range (±pairLimit), random
// fractions and steps (including steps that wrap past a whole pixel and
// weights that round up to 256), every length from 0 to 40 (whole blocks
// of eight and tails).
func TestLerpMatchesGo(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 7))
	for n := 0; n <= 40; n++ {
		for trial := 0; trial < 50; trial++ {
			p, q := make([]int16, n+3), make([]int16, n+3)
			for i := range p {
				p[i] = int16(rng.IntN(2*pairLimit+1) - pairLimit)
				q[i] = int16(rng.IntN(2*pairLimit+1) - pairLimit)
				if trial%3 == 0 { // values near the 0..255 the maps clip to
					p[i], q[i] = int16(rng.IntN(300)-20), int16(rng.IntN(300)-20)
				}
			}
			frac, step := rng.Uint32(), rng.Uint32()
			if trial%4 == 1 {
				frac, step = 0xffffffff-uint32(rng.IntN(1<<24)), uint32(rng.IntN(1<<20))
			}
			gotI, wantI := make([]int16, n), make([]int16, n)
			lerpI16(gotI, p, q, frac, step)
			lerpI16Go(wantI, p, q, frac, step)
			wantU := make([]uint8, n)
			lerpU8Go(wantU, p, q, frac, step)
			// Two planes with one set of weights: the second plane is
			// the first one's rows backwards, read from offset 1.
			st := newLerpSteps(step)
			rp, rq := slices.Clone(q[1:]), slices.Clone(p[1:])
			slices.Reverse(rp)
			slices.Reverse(rq)
			got2a, got2b, want2b := make([]uint8, n), make([]uint8, n), make([]uint8, n)
			lerp2U8(got2a, got2b, p, q, rp, rq, frac, &st)
			lerpU8Go(want2b, rp, rq, frac, step)
			for j := 0; j < n; j++ {
				if gotI[j] != wantI[j] || got2a[j] != wantU[j] || got2b[j] != want2b[j] {
					t.Fatalf("n=%d frac=%#x step=%#x pixel %d: int16 %d want %d, bytes %d, %d want %d, %d",
						n, frac, step, j, gotI[j], wantI[j], got2a[j], got2b[j], wantU[j], want2b[j])
				}
			}
		}
	}
}

// TestLerpWeight: the 32-bit weight is the fraction rounded to 1/256,
// ⌊(frac + 2²³) / 2²⁴⌋, computed in 64 bits as the bilinear samplers do,
// including fractions within half a step of the next pixel (weight 256).
func TestLerpWeight(t *testing.T) {
	for _, frac := range []uint32{0, 1, 1<<23 - 1, 1 << 23, 1<<24 - 1, 1 << 31, 0xff7fffff, 0xff800000, 0xffffffff} {
		want := int32((int64(frac) + 1<<23) >> 24)
		if got := lerpWeight(frac); got != want {
			t.Errorf("lerpWeight(%#x) = %d, want %d", frac, got, want)
		}
	}
	if lerpWeight(0xffffffff) != 256 {
		t.Errorf("a fraction just short of a whole pixel must weigh 256")
	}
}

// TestLerpEndpoints: weight 0 gives p and weight 256 gives q, exactly;
// the byte kernel clips to 0..255.
func TestLerpEndpoints(t *testing.T) {
	p := []int16{-500, 0, 17, 255, 300, 1000, -1, 128}
	q := []int16{900, 255, -17, 0, 12, -1000, 256, 127}
	got := make([]int16, 8)
	lerpI16(got, p, q, 0, 0)
	for j := range p {
		if got[j] != p[j] {
			t.Errorf("weight 0: pixel %d = %d, want %d", j, got[j], p[j])
		}
	}
	lerpI16(got, p, q, 0xffffffff, 0)
	for j := range q {
		if got[j] != q[j] {
			t.Errorf("weight 256: pixel %d = %d, want %d", j, got[j], q[j])
		}
	}
	b, c := make([]uint8, 8), make([]uint8, 8)
	st := newLerpSteps(0)
	lerp2U8(b, c, p, q, q, p, 0, &st)
	want := []uint8{0, 0, 17, 255, 255, 255, 0, 128}
	for j := range want {
		if b[j] != want[j] {
			t.Errorf("clipped pixel %d = %d, want %d", j, b[j], want[j])
		}
	}
}

// TestFillYCbCrMatchesGo holds the vector separation of Y′CbCr rows to
// ycbcrSeg.fill bit for bit: random planes (including the extremes 0 and
// 255 of every plane), random separators of both signs and random gains,
// several segments a row, each with its own constants.
func TestFillYCbCrMatchesGo(t *testing.T) {
	if !haveLerpSIMD {
		t.Skip("no vector kernels on this architecture")
	}
	if unsafe.Sizeof(ycbcrLanes{}) != 32 || unsafe.Offsetof(ycbcrLanes{}.gridB) != 12 || unsafe.Offsetof(ycbcrLanes{}.top) != 16 {
		t.Fatalf("ycbcrLanes layout changed: update the offsets in lerp_amd64.s")
	}
	rng := rand.New(rand.NewPCG(11, 11))
	pick := func() uint8 { return extremeByte(rng) }
	for trial := 0; trial < 200; trial++ {
		nseg := 1 + rng.IntN(4)
		n := nseg * ycbcrSegment
		y, cb, cr := make([]uint8, n), make([]uint8, n/2), make([]uint8, n/2)
		for i := range y {
			y[i] = pick()
		}
		for i := range cb {
			cb[i], cr[i] = pick(), pick()
		}
		segs, lanes := make([]ycbcrSeg, nseg), make([]ycbcrLanes, nseg)
		var f0 sepFixed
		for k := range segs {
			var f sepFixed
			for j := 0; j < 3; j++ {
				f.kb[j] = int32(rng.IntN(6001) - 3000)
				f.ka[j] = int32(rng.IntN(6001) - 3000)
			}
			f.off = int32(rng.IntN(101) - 50)
			g := [3]float64{0.8 + 0.6*rng.Float64(), 0.8 + 0.6*rng.Float64(), 0.8 + 0.6*rng.Float64()}
			if k == 0 {
				f0 = f
			}
			// One separator a row (its constant parts are the row's);
			// the gains change from segment to segment.
			f.kb, f.ka, f.off = f0.kb, f0.ka, f0.off
			segs[k].set(&f, g, ycbcrConstants(&f0))
			lanes[k].set(&segs[k])
		}
		gi, gg := make([]int16, n), make([]int16, n)
		a := ycbcrConstants(&f0)
		fillYCbCrSIMD(gi, gg, y, cb, cr, lanes, int32(a[0]), int32(a[1]))
		wi, wg := make([]int16, n), make([]int16, n)
		for k := range segs {
			xs := k * ycbcrSegment
			segs[k].fill(wi[xs:xs+ycbcrSegment], wg[xs:xs+ycbcrSegment], y[xs:xs+ycbcrSegment], cb[xs/2:], cr[xs/2:])
		}
		for x := range gi {
			if gi[x] != wi[x] || gg[x] != wg[x] {
				t.Fatalf("trial %d pixel %d (Y %d Cb %d Cr %d): ink %d grid %d, want %d %d",
					trial, x, y[x], cb[x/2], cr[x/2], gi[x], gg[x], wi[x], wg[x])
			}
		}
	}
}

// TestYCbCrFitsRefusesOverflow: rows whose sums could leave the 32-bit
// lanes are refused, so that they are computed in 64 bits.
func TestYCbCrFitsRefusesOverflow(t *testing.T) {
	gains := func(g float64) gainScratch {
		return gainScratch{{1, g, 1}, {1, 1, 1}, {g, 1, 1}}
	}
	f := sepFixed{kb: [3]int32{3000, -2000, 1000}, ka: [3]int32{-1500, 2500, -1000}}
	if !ycbcrFits(&f, ycbcrConstants(&f), gains(1.3)) {
		t.Errorf("ordinary coefficients refused")
	}
	f.kb[0] = 30000 // within 16 bits, but not with a gain of 1.3
	if ycbcrFits(&f, ycbcrConstants(&f), gains(1.3)) {
		t.Errorf("a coefficient beyond 16 bits with its gain accepted")
	}
	f.kb = [3]int32{20000, 20000, 20000} // 16 bits each, but the sum overflows
	if ycbcrFits(&f, ycbcrConstants(&f), gains(1)) {
		t.Errorf("coefficients whose sum overflows 32 bits accepted")
	}
}

// TestRunLength: the pixels of a run share their point's integer part and
// the next pixel's differs, for steps of both signs, whole-pixel steps and
// none.
func TestRunLength(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	steps := []int64{0, 1 << 32, -1 << 32, 1<<32 + 12345, 1<<32 - 98765}
	for i := 0; i < 2000; i++ {
		steps = append(steps, rng.Int64N(1<<31)-1<<30)
	}
	for _, step := range steps {
		v := rng.Int64N(1<<44) - 1<<43
		n := runLength(v, step, 500)
		if n < 1 || n > 500 {
			t.Fatalf("v %#x step %d: run %d", v, step, n)
		}
		for j := 0; j < n; j++ {
			if (v+int64(j)*step)>>32 != v>>32 {
				t.Fatalf("v %#x step %d: pixel %d of a run of %d leaves the pixel", v, step, j, n)
			}
		}
		if n < 500 && (v+int64(n)*step)>>32 == v>>32 {
			t.Fatalf("v %#x step %d: the run of %d stops early", v, step, n)
		}
	}
}

// TestBlocks4MatchesGo holds the vector block sums of the work copy to the
// table-driven Go sums (yccTables.blocks4 with the vector code off) bit
// for bit: random planes with every plane's extremes, rows of 1 to 40
// blocks (pairs and an odd last block), sums added to what acc held.
func TestBlocks4MatchesGo(t *testing.T) {
	if !haveBlocksSIMD {
		t.Skip("no vector kernels on this architecture")
	}
	rng := rand.New(rand.NewPCG(13, 13))
	pick := func() uint8 { return extremeByte(rng) }
	tab := newYCCTables()
	for n := 1; n <= 40; n++ {
		ya, yb, cb, cr := make([]uint8, 4*n), make([]uint8, 4*n), make([]uint8, 2*n), make([]uint8, 2*n)
		for i := range ya {
			ya[i], yb[i] = pick(), pick()
		}
		for i := range cb {
			cb[i], cr[i] = pick(), pick()
		}
		got, want := make([]uint32, 4*n), make([]uint32, 4*n)
		for i := range got {
			got[i] = uint32(rng.IntN(1000))
			want[i] = got[i]
		}
		cntG, cntW := make([]uint32, n), make([]uint32, n)
		tab.blocks4(got, cntG, ya, yb, cb, cr)
		// The Go sums, block by block, as blocks4 writes them without
		// vector code.
		for ox := 0; ox < n; ox++ {
			for j := 0; j < 2; j++ {
				for _, y := range []uint8{ya[4*ox+2*j], ya[4*ox+2*j+1], yb[4*ox+2*j], yb[4*ox+2*j+1]} {
					r, g, b := color.YCbCrToRGB(y, cb[2*ox+j], cr[2*ox+j])
					want[4*ox] += uint32(r)
					want[4*ox+1] += uint32(g)
					want[4*ox+2] += uint32(b)
				}
			}
			cntW[ox] += 8
		}
		if !slices.Equal(got, want) || !slices.Equal(cntG, cntW) {
			t.Fatalf("%d blocks: sums %v, want %v (counts %v, %v)", n, got, want, cntG, cntW)
		}
	}
}

// extremeByte is a random byte, 0 or 255 one time in eight each: the
// values where conversions clip.
func extremeByte(rng *rand.Rand) uint8 {
	switch rng.IntN(8) {
	case 0:
		return 0
	case 1:
		return 255
	}
	return uint8(rng.IntN(256))
}
