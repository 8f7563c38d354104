package human

import (
	"math"
	"testing"
)

func TestNum(t *testing.T) {
	for _, tc := range []struct {
		in   float64
		want string
	}{
		{0, "0"}, {1, "1"}, {0.6402, "0.6402"}, {753.84, "753.8"}, {-90.163, "-90.16"},
		{9.999999999999999e-05, "0.0001"}, {0.30000000000000004, "0.3"}, {499.99999999999955, "500"},
		{1.1102e-13, "1.11e-13"}, {2.019e-28, "2.019e-28"}, {1.2e-5, "1.2e-5"}, {3.4e7, "3.4e+7"},
		{9.99995, "10"}, {12500, "12500"}, {math.NaN(), "n/a"}, {math.Inf(1), "∞"},
	} {
		if got := Num(tc.in); got != tc.want {
			t.Errorf("Num(%v) = %q, want %q", tc.in, got, tc.want)
		}
	}
}

func TestRes(t *testing.T) {
	for _, tc := range []struct {
		x, res float64
		want   string
	}{
		{2.019e-28, 0.001, "0"}, {0.123456, 0.001, "0.123"}, {499.99999999999955, 1e-6, "500"},
		{-0.0004, 0.001, "0"}, {1234.5, 10, "1230"}, {-6.7721, 0.01, "-6.77"}, {0.1, 0.05, "0.1"},
		{1.5, 0, "1.5"}, {1.5, math.NaN(), "1.5"},
	} {
		if got := Res(tc.x, tc.res); got != tc.want {
			t.Errorf("Res(%v, %v) = %q, want %q", tc.x, tc.res, got, tc.want)
		}
	}
}

func TestCountsAndShares(t *testing.T) {
	for _, tc := range []struct{ got, want string }{
		{Count(1, "run"), "1 run"}, {Count(0, "run"), "0 runs"}, {Count(2, "pass"), "2 passes"},
		{CountAs(1, "sample pair", "sample pairs"), "1 sample pair"},
		{Percent(1), "100%"}, {Percent(0), "0%"}, {Percent(0.5), "50.0%"},
		{Percent(4200.0 / 4201), "99.98%"}, {Percent(1.0 / 4201), "0.02%"}, {Percent(1 - 1e-9), ">99.9999%"},
		{Share(0, 0, "run"), "none (0 runs)"}, {Share(4, 4, "run"), "100% (4 of 4 runs)"},
		{Share(1, 1, "run"), "100% (1 of 1 run)"},
		{Confidence(0.999999), "99.9999%"}, {Confidence(0.95), "95%"}, {Confidence(1 - 1e-12), "99.9999999999%"},
	} {
		if tc.got != tc.want {
			t.Errorf("got %q, want %q", tc.got, tc.want)
		}
	}
}

func TestNear(t *testing.T) {
	for _, tc := range []struct {
		x, scale float64
		want     string
	}{
		{2.019e-28, 7, "0"}, {-0.1771423, 0.04169, "-0.1771"}, {1.6983672, 0.3018, "1.698"},
		{-159.43, 103, "-159.4"}, {0.00049, 1, "0"}, {0.0012345, 1, "0.001"}, {3, 0, "3"},
	} {
		if got := Near(tc.x, tc.scale); got != tc.want {
			t.Errorf("Near(%v, %v) = %q, want %q", tc.x, tc.scale, got, tc.want)
		}
	}
}

func TestRound(t *testing.T) {
	for _, tc := range []struct{ got, want float64 }{
		{RoundSig(499.99999999999955, 9), 500}, {RoundSig(0.30000000000000004, 9), 0.3}, {RoundSig(-1234.5678, 3), -1230},
		{RoundTo(1.1102e-13, 1e-9), 0}, {RoundTo(0.0123456, 1e-4), 0.0123}, {RoundTo(-1e-12, 1e-9), 0}, {RoundTo(2.5, 0), 2.5},
	} {
		if tc.got != tc.want || math.Signbit(tc.got) != math.Signbit(tc.want) {
			t.Errorf("got %v, want %v", tc.got, tc.want)
		}
	}
}
