package accuracy

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"
)

func TestPercentile(t *testing.T) {
	nan := math.NaN()
	for _, tc := range []struct {
		xs   []float64
		p    float64
		want float64
	}{
		// Hyndman & Fan definition 7, as numpy.percentile's default
		// ("linear"): percentile([1,2,3,4], 10) = 1.3, median 2.5.
		{[]float64{4, 1, 3, 2}, 10, 1.3},
		{[]float64{4, 1, 3, 2}, 50, 2.5},
		{[]float64{1, 2, 3, 4}, 100, 4},
		{[]float64{1, 2, 3, 4}, 0, 1},
		// numpy.percentile([15, 20, 35, 40, 50], 40) = 29.0
		{[]float64{15, 20, 35, 40, 50}, 40, 29},
		{[]float64{7}, 10, 7},
		{[]float64{nan, 3, math.Inf(1), 1}, 50, 2},
	} {
		assert.InDelta(t, tc.want, Percentile(tc.xs, tc.p), 1e-12, "%v p%g", tc.xs, tc.p)
	}
	assert.True(t, math.IsNaN(Percentile(nil, 50)))
	assert.True(t, math.IsNaN(Median([]float64{nan})))
	assert.InDelta(t, 3.0, MedianAbs([]float64{-5, 1, -3}), 1e-12)
	assert.InDelta(t, 2.0, Mean([]float64{1, nan, 3}), 1e-12)
}

func TestFJSON(t *testing.T) {
	type x struct {
		A F `json:"a"`
		B F `json:"b"`
	}
	b, err := json.Marshal(x{A: F(math.NaN()), B: 1.5})
	require.NoError(t, err)
	assert.JSONEq(t, `{"a":null,"b":1.5}`, string(b))
	var back x
	require.NoError(t, json.Unmarshal(b, &back))
	assert.True(t, math.IsNaN(float64(back.A)))
	assert.Equal(t, F(1.5), back.B)
}

func TestSummarize(t *testing.T) {
	nan := F(math.NaN())
	page := func(cond string, snr []F, found int, hrErr F, class string) Page {
		p := Page{Condition: cond, SNRdB: map[string]F{}, StrictSNRdB: map[string]F{}, LeadsPrinted: len(snr), LeadsFound: found,
			HRErrBPM: hrErr, PRErrMS: nan, QRSErrMS: nan, QTErrMS: nan, Seconds: 0.5, GainCorrect: class == "",
			PxPerMMXErrPct: 0.1, PxPerMMYErrPct: -0.2, SkewErrDeg: 0, Class: class}
		for i, v := range snr {
			name := string(rune('A' + i))
			p.SNRdB[name] = v
			p.StrictSNRdB[name] = v - 5
		}
		return p
	}
	pages := []Page{
		page("clean", []F{10, 20}, 2, -1, ""),
		page("clean", []F{30, 40}, 2, 3, ""),
		page("fax", []F{0, 0}, 0, nan, "no-ecg"),
	}
	rows := Summarize(pages, func(p Page) string { return p.Condition })
	require.Len(t, rows, 3)
	assert.Equal(t, []string{"clean", "fax", "all"}, []string{rows[0].Condition, rows[1].Condition, rows[2].Condition})
	c := rows[0]
	assert.Equal(t, 2, c.Pages)
	assert.Equal(t, 0, c.Failed)
	assert.InDelta(t, 25, float64(c.SNRMedianDB), 1e-9)
	assert.InDelta(t, 13, float64(c.SNRP10DB), 1e-9) // 10 + 0.3·(20−10)
	assert.InDelta(t, 20, float64(c.StrictMedianDB), 1e-9)
	assert.InDelta(t, 100, float64(c.LeadsFoundPct), 1e-9)
	assert.InDelta(t, 2, float64(c.HRErrBPM), 1e-9, "median of |−1| and |3|")
	assert.True(t, math.IsNaN(float64(c.PRErrMS)))
	a := rows[2]
	assert.Equal(t, 1, a.Failed)
	assert.InDelta(t, 200.0/3, float64(a.LeadsFoundPct), 1e-9)
	assert.InDelta(t, 200.0/3, float64(a.GainCorrectPct), 1e-9)
	assert.InDelta(t, 0, float64(a.GainPulsePct), 1e-9)

	var buf bytes.Buffer
	require.NoError(t, WriteTable(&buf, "condition", rows))
	assert.Contains(t, buf.String(), "clean")
	assert.Equal(t, 4, strings.Count(buf.String(), "\n"), buf.String())
	buf.Reset()
	require.NoError(t, WriteMarkdown(&buf, "condition", rows))
	assert.Contains(t, buf.String(), "| fax | 1 | 1 | 0.0 |")
	assert.Equal(t, strings.Count(strings.SplitN(buf.String(), "\n", 2)[0], "|"), strings.Count(strings.Split(buf.String(), "\n")[2], "|"), "header and rows have the same columns")
	b, err := json.Marshal(rows)
	require.NoError(t, err, "NaN statistics must still encode")
	assert.Contains(t, string(b), `"pr_abs_err_ms_median":null`)
}
