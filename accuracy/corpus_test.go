package accuracy

import (
	"math"
	"testing"

	"github.com/stretchr/testify/assert"
	"github.com/stretchr/testify/require"

	"tracelift/ecg"
)

func TestCases(t *testing.T) {
	cs := Cases([]string{"clean", "fax"}, []string{"3x4", "6x2", "12x1"}, 4, 10)
	require.Len(t, cs, 2*3*4)
	assert.Equal(t, Case{"clean", "3x4", 10}, cs[0])
	assert.Equal(t, Case{"fax", "12x1", 13}, cs[len(cs)-1])
	assert.Equal(t, "fax_12x1_0013", cs[len(cs)-1].Name())
	assert.Len(t, Cases([]string{"scan"}, nil, 3, 1), 3, "no layouts: the condition's own choice")
}

func TestRenderCaseAndPrintedRecord(t *testing.T) {
	c := Case{Condition: "clean", Layout: "3x4", Seed: 5}
	rec, page, err := RenderCase(c)
	require.NoError(t, err)
	rec2, page2, err := RenderCase(c)
	require.NoError(t, err)
	assert.Equal(t, page.Truth.PaperToImage, page2.Truth.PaperToImage, "same case, same page")
	assert.Equal(t, rec.Signals[0].Samples[:50], rec2.Signals[0].Samples[:50])
	assert.Equal(t, "3x4", page.Truth.Layout)

	// On a 3 × 4 page each lead is printed for one 2.5 s column (common
	// practice, standards.md §1.2): V1 sits in the third column (5–7.5 s).
	pr := PrintedRecord(&page.Truth)
	assert.Len(t, pr.Signals, 12)
	v1 := pr.Signal(ecg.LeadV1)
	require.NotNil(t, v1)
	first, last, ok := v1.ValidSpan()
	require.True(t, ok)
	assert.InDelta(t, 5.0, v1.Time(first), 0.01)
	assert.InDelta(t, 7.5, v1.Time(last), 0.01)
	assert.True(t, math.IsNaN(v1.At(1.0)))
	assert.NotEmpty(t, pr.Beats)
}
