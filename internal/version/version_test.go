package version

import (
	"strings"
	"testing"
)

func TestString(t *testing.T) {
	if s := String(); !strings.HasPrefix(s, Number) {
		t.Errorf("String() = %q, want it to start with %q", s, Number)
	}
}
