package measure

import (
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"sync"
	"testing"
	"time"

	"tracelift/ecg"
	"tracelift/synth"
)

// BenchmarkMeasure12Lead10s: a 10 s, 12-lead, 500 Hz record (target
// ≤ 20 ms per record).
func BenchmarkMeasure12Lead10s(b *testing.B) {
	rec, err := synth.Generate(synth.Default(), 1)
	if err != nil {
		b.Fatal(err)
	}
	rec.Beats = nil
	benchCPU(b, func() error { _, err := Measure(rec, nil); return err })
}

// BenchmarkMeasure12Lead10s20kHz: a 10 s 12-lead record sampled at
// 20 kHz (measured on a 1 kHz version; 11 s per record before that).
func BenchmarkMeasure12Lead10s20kHz(b *testing.B) {
	src, err := synth.Generate(synth.Default(), 1)
	if err != nil {
		b.Fatal(err)
	}
	var rec ecg.Record
	for _, s := range src.Signals {
		rec.Signals = append(rec.Signals, ecg.Resample(s, 20000))
	}
	benchCPU(b, func() error { _, err := Measure(rec, nil); return err })
}

// BenchmarkDetectMITBIH100: beat detection on MIT-BIH record 100 (30 min,
// 2 leads, 360 Hz).
func BenchmarkDetectMITBIH100(b *testing.B) {
	dir := refdataDir(b, "mitdb")
	rec, _ := readWFDB(b, filepath.Join(dir, "100.hea"))
	benchCPU(b, func() error { _, err := DetectBeats(rec, nil); return err })
}

// benchCPU runs op in b.Loop and reports allocations and the process CPU
// time per operation (cpu-ms/op, all threads), which on a shared machine
// says more than wall time.
func benchCPU(b *testing.B, op func() error) {
	b.Helper()
	b.ReportAllocs()
	c0 := processCPU()
	for b.Loop() {
		if err := op(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(processCPU()-c0)/1e6/float64(b.N), "cpu-ms/op")
}

// BenchmarkMeasure24h: a 24-hour single-lead recording at 250 Hz (21.6 M
// samples, a 60 s synthetic record tiled; target ≤ 30 s and ≤ 1 GB). It
// reports the peak live heap during the call (peak-MB, sampled every
// 20 ms), which includes the 173 MB input.
func BenchmarkMeasure24h(b *testing.B) {
	p := synth.Default()
	p.DurationS, p.SampleRate, p.HRVStdMS, p.NoiseMV = 60, 250, 30, 0.01
	src, err := synth.Generate(p, 7)
	if err != nil {
		b.Fatal(err)
	}
	tile := src.Signal(ecg.LeadII).Samples
	n := 24 * 3600 * 250
	x := make([]float64, n)
	for i := 0; i < n; i += len(tile) {
		copy(x[i:], tile)
	}
	rec := ecg.Record{Signals: []ecg.Signal{{Lead: ecg.LeadII, SampleRate: 250, Samples: x}}}
	runtime.GC()
	var peak uint64
	stop := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		tk := time.NewTicker(20 * time.Millisecond)
		defer tk.Stop()
		for {
			select {
			case <-stop:
				return
			case <-tk.C:
				metrics.Read(s)
				peak = max(peak, s[0].Value.Uint64())
			}
		}
	}()
	var beats int
	c0 := processCPU()
	for b.Loop() {
		rep, err := Measure(rec, nil)
		if err != nil {
			b.Fatal(err)
		}
		beats = rep.BeatCount
	}
	cpu := processCPU() - c0
	close(stop)
	wg.Wait()
	b.ReportMetric(cpu.Seconds()/float64(b.N), "cpu-s/op")
	b.ReportMetric(float64(peak)/1e6, "peak-MB")
	b.ReportMetric(float64(beats), "beats")
}
