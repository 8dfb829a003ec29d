package measure

import (
	"testing"

	"tracelift/internal/refdata"
)

func refdataDir(t testing.TB, name string) string { return refdata.Dir(t, name) }
