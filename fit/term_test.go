package fit

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestTermJSON checks that a term is written under the current keys and
// the deprecated ones, and read back from either spelling.
func TestTermJSON(t *testing.T) {
	b, err := json.Marshal(Term{Name: "theta", Interval: [2]float64{-1, 1}, KeptShare: 0.25, RarelyKept: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, key := range []string{`"kept_share":0.25`, `"rarely_kept":true`, `"inclusion":0.25`, `"weak":true`} {
		if !strings.Contains(string(b), key) {
			t.Errorf("%s lacks %s", b, key)
		}
	}
	for _, tc := range []struct {
		name, in string
		want     Term
	}{
		{"current", `{"name":"x","interval":[0,1],"kept_share":0.75,"rarely_kept":false}`, Term{"x", [2]float64{0, 1}, 0.75, false}},
		{"deprecated", `{"name":"x","interval":[0,1],"inclusion":0.25,"weak":true}`, Term{"x", [2]float64{0, 1}, 0.25, true}},
		{"both, current wins", `{"name":"x","kept_share":0.75,"rarely_kept":false,"inclusion":0.25,"weak":true}`, Term{"x", [2]float64{}, 0.75, false}},
		{"neither", `{"name":"x"}`, Term{Name: "x"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var got Term
			if err := json.Unmarshal([]byte(tc.in), &got); err != nil {
				t.Fatal(err)
			}
			if got != tc.want {
				t.Errorf("got %+v, want %+v", got, tc.want)
			}
		})
	}
}
