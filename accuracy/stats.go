package accuracy

import (
	"encoding/json"
	"math"
	"sort"
	"strconv"
)

// F is a float64 that encodes NaN and ±Inf as JSON null (and decodes null
// as NaN), so that unknown values survive a JSON round trip.
type F float64

// MarshalJSON implements json.Marshaler.
func (f F) MarshalJSON() ([]byte, error) {
	v := float64(f)
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, v, 'g', 6, 64), nil
}

// UnmarshalJSON implements json.Unmarshaler.
func (f *F) UnmarshalJSON(b []byte) error {
	if string(b) == "null" {
		*f = F(math.NaN())
		return nil
	}
	var v float64
	if err := json.Unmarshal(b, &v); err != nil {
		return err
	}
	*f = F(v)
	return nil
}

// Percentile returns the p-th percentile (0 ≤ p ≤ 100) of the finite
// values in xs by linear interpolation between order statistics (Hyndman
// and Fan definition 7), or NaN when there are none. xs is not modified.
func Percentile(xs []float64, p float64) float64 {
	v := finite(xs)
	if len(v) == 0 {
		return math.NaN()
	}
	sort.Float64s(v)
	h := (float64(len(v)) - 1) * p / 100
	lo := int(math.Floor(h))
	hi := min(lo+1, len(v)-1)
	return v[lo] + (h-float64(lo))*(v[hi]-v[lo])
}

// Median is Percentile(xs, 50).
func Median(xs []float64) float64 { return Percentile(xs, 50) }

// MedianAbs returns the median of |x| over the finite values of xs.
func MedianAbs(xs []float64) float64 {
	a := make([]float64, 0, len(xs))
	for _, x := range xs {
		a = append(a, math.Abs(x))
	}
	return Median(a)
}

// Mean returns the mean of the finite values of xs, NaN when none.
func Mean(xs []float64) float64 {
	v := finite(xs)
	if len(v) == 0 {
		return math.NaN()
	}
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

func finite(xs []float64) []float64 {
	out := make([]float64, 0, len(xs))
	for _, x := range xs {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			out = append(out, x)
		}
	}
	return out
}
