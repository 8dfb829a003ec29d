package imageproc

// affineSepRow is affineRowNRGBA followed by sepFixed.row for one row of
// the upright page: each pixel is sampled bilinearly from the NRGBA input
// (sw×sh, rows of ss bytes; the source point starts at (sx, sy) and
// advances by (stepX, stepY) per pixel, 32.32 fixed point) and separated
// into gr, ir and dr (grey pages leave dr untouched) with the row's gains
// g (3 per pixel, 8.8 fixed point). The maps are those of the two
// functions (TestAffineSepRowMatches). The pixels whose four neighbours
// all lie inside the input form one run along the row (the source point
// moves on a line); that run is sampled and separated in one loop without
// calls or range tests, and its colour samples are never stored (the
// upright colour page is made only on demand: Page.Upright); the few
// pixels at the page's edges go through the two functions, with col (4
// bytes per pixel of the row) as their scratch.
//
// lo > 0 reads a window of the input's rows: row y starts at
// sp[(y−lo)·ss] (the rows the line crosses must be there).
func (f *sepFixed) affineSepRow(col []uint8, g []uint32, gr, ir, dr []uint8, sp []uint8, ss, sw, sh, lo int, sx, sy, stepX, stepY int64) {
	w := len(gr)
	xa, xb := interiorRun(w, sw, sh, sx, sy, stepX, stepY)
	if xa > 0 {
		affineRowNRGBA(col[:4*xa], sp, ss, sw, sh, lo, sx, sy, stepX, stepY)
		f.row(col[:4*xa], g[:3*xa], gr[:xa], ir[:xa], dr[:xa])
	}
	if xb > xa {
		// Inside the run the window's rows are read directly.
		s0, s1 := sx+int64(xa)*stepX, sy+int64(xa)*stepY-int64(lo)<<32
		gg := g[3*xa : 3*xb]
		if f.colour {
			f.sampleColour(gg, gr[xa:xb], ir[xa:xb], dr[xa:xb], sp, ss, s0, s1, stepX, stepY)
		} else {
			f.sampleGrey(gg, gr[xa:xb], ir[xa:xb], sp, ss, s0, s1, stepX, stepY)
		}
	}
	if xb < w {
		s0, s1 := sx+int64(xb)*stepX, sy+int64(xb)*stepY
		affineRowNRGBA(col[4*xb:4*w], sp, ss, sw, sh, lo, s0, s1, stepX, stepY)
		f.row(col[4*xb:4*w], g[3*xb:3*w], gr[xb:w], ir[xb:w], dr[xb:w])
	}
}

// interiorRun returns [xa, xb), the pixels of a w-pixel row whose source
// point (starting at (sx, sy), advancing by (stepX, stepY) per pixel,
// 32.32 fixed point) has its four bilinear neighbours inside the sw×sh
// input. The point moves on a line, so they form one run; its end is
// found from the far end, which is outside at most for the page's margin.
func interiorRun(w, sw, sh int, sx, sy, stepX, stepY int64) (xa, xb int) {
	inside := func(x int) bool {
		px, py := sx+int64(x)*stepX, sy+int64(x)*stepY
		return uint(px>>32) < uint(sw-1) && uint(py>>32) < uint(sh-1)
	}
	for xa < w && !inside(xa) {
		xa++
	}
	xb = xa
	if xa < w {
		xb = w
		for xb > xa && !inside(xb-1) {
			xb--
		}
	}
	return xa, xb
}

// sampleColour is the inner run of affineSepRow for a colour separator:
// every source point of the run has its four neighbours inside.
func (f *sepFixed) sampleColour(g []uint32, gr, ir, dr []uint8, sp []uint8, ss int, sx, sy, stepX, stepY int64) {
	ka, kb, off := f.ka, f.kb, f.off
	ir = ir[:len(gr)]
	dr = dr[:len(gr)]
	g = g[:3*len(gr)]
	for x := range gr {
		i := int(sy>>32)*ss + 4*int(sx>>32)
		ax := int32(((sx & (fixOne - 1)) + 1<<23) >> 24)
		ay := int32(((sy & (fixOne - 1)) + 1<<23) >> 24)
		c0 := sp[i : i+8 : i+8]
		c1 := sp[i+ss : i+ss+8 : i+ss+8]
		r, gg, b := bilerp8(c0, c1, 0, ax, ay), bilerp8(c0, c1, 1, ax, ay), bilerp8(c0, c1, 2, ax, ay)
		sx += stepX
		sy += stepY
		k := g[3*x : 3*x+3 : 3*x+3]
		rr := min(255, (r*k[0]+128)>>8)
		gn := min(255, (gg*k[1]+128)>>8)
		bb := min(255, (b*k[2]+128)>>8)
		gr[x] = uint8((77*rr + 150*gn + 29*bb + 128) >> 8)
		a0, a1, a2 := 255-int32(rr), 255-int32(gn), 255-int32(bb)
		dr[x] = sat8((ka[0]*a0 + ka[1]*a1 + ka[2]*a2) >> 10)
		ir[x] = sat8((kb[0]*a0+kb[1]*a1+kb[2]*a2)>>10 - off)
	}
}

// sampleGrey is sampleColour for a grey separator (no grid map: the
// structural split fills it).
func (f *sepFixed) sampleGrey(g []uint32, gr, ir []uint8, sp []uint8, ss int, sx, sy, stepX, stepY int64) {
	loG, spanG := f.loG, f.spanG
	ir = ir[:len(gr)]
	g = g[:3*len(gr)]
	for x := range gr {
		i := int(sy>>32)*ss + 4*int(sx>>32)
		ax := int32(((sx & (fixOne - 1)) + 1<<23) >> 24)
		ay := int32(((sy & (fixOne - 1)) + 1<<23) >> 24)
		c0 := sp[i : i+8 : i+8]
		c1 := sp[i+ss : i+ss+8 : i+ss+8]
		r, gg, b := bilerp8(c0, c1, 0, ax, ay), bilerp8(c0, c1, 1, ax, ay), bilerp8(c0, c1, 2, ax, ay)
		sx += stepX
		sy += stepY
		k := g[3*x : 3*x+3 : 3*x+3]
		rr := min(255, (r*k[0]+128)>>8)
		gn := min(255, (gg*k[1]+128)>>8)
		bb := min(255, (b*k[2]+128)>>8)
		lum := (77*rr + 150*gn + 29*bb + 128) >> 8
		gr[x] = uint8(lum)
		ir[x] = sat8(((255 - int32(lum) - loG) * spanG) >> 10)
	}
}

// bilerp8 interpolates channel k of the 2 × 2 NRGBA block whose rows start
// at c0 and c1 (8 bytes each) at the 8-bit fractions ax, ay. Σ w·c with the
// weights (256−ax)(256−ay), ax(256−ay), (256−ax)ay, ax·ay is exactly the
// lerp along y of two lerps along x, each 256·c0 + a·(c1 − c0): three
// products instead of four plus the weights.
func bilerp8(c0, c1 []uint8, k int, ax, ay int32) uint32 {
	t0 := int32(c0[k])<<8 + ax*(int32(c0[k+4])-int32(c0[k]))
	t1 := int32(c1[k])<<8 + ax*(int32(c1[k+4])-int32(c1[k]))
	return uint32(t0<<8+ay*(t1-t0)+32768) >> 16
}
