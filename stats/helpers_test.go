package stats

import (
	"math"
	"testing"
)

// near reports whether got is within tol of want, relative to |want| (or
// absolute when want is 0).
func near(got, want, tol float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return false
	}
	if want == 0 {
		return math.Abs(got) <= tol
	}
	return math.Abs(got-want) <= tol*math.Abs(want)
}

// checkNear fails the test when got is not within relative tol of want.
func checkNear(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if !near(got, want, tol) {
		t.Errorf("%s: got %v, want %v (relative tolerance %g)", name, got, want, tol)
	}
}

// checkAbs fails the test when got is not within absolute tol of want.
func checkAbs(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if math.IsNaN(got) || math.Abs(got-want) > tol {
		t.Errorf("%s: got %v, want %v (absolute tolerance %g)", name, got, want, tol)
	}
}
