package fit

import (
	"bytes"
	"encoding/json"
	"os"
	"reflect"
	"strings"
	"testing"
)

// TestReadCertificateOldSettings: a certificate.json written before the
// settings were typed (a plain object that basin run filled; the demo's,
// unchanged but for the inputs path) still loads, every key into its
// part, and writes back the same keys and values.
func TestReadCertificateOldSettings(t *testing.T) {
	b, err := os.ReadFile("testdata/certificate-before-typed-settings.json")
	if err != nil {
		t.Fatal(err)
	}
	c, err := ReadCertificate(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	s := c.Settings
	if s == nil || s.Search == nil || s.Field == nil || s.Holdout == nil || s.Command == nil {
		t.Fatalf("settings parts missing: %+v", s)
	}
	want := Settings{
		Search:  &SearchSettings{VDegree: 2, Seed: 1, Growth: 8},
		Field:   &FieldSettings{Degree: 3, Derivative: "auto", Bootstrap: 100, SelectFolds: 5},
		Holdout: &HoldoutSettings{Folds: 5, MinDecrease: 0.99, Beta: 1e-6, AllFolds: true},
		Command: &CommandSettings{Inputs: "demo/data"},
	}
	if !sameParts(s, &want) {
		t.Errorf("settings\n got %s\nwant %s", dump(s), dump(&want))
	}
	// Written back: the same object (keys and values), old keys intact.
	var old struct {
		Settings map[string]any `json:"settings"`
	}
	if err := json.Unmarshal(b, &old); err != nil {
		t.Fatal(err)
	}
	if got := roundTrip(t, s); !reflect.DeepEqual(got, old.Settings) {
		t.Errorf("written back\n got %v\nwant %v", got, old.Settings)
	}
}

// TestSettingsJSON: settings objects of older and odd shapes load;
// unknown keys and values of an unexpected type are kept, as read, in
// Other (nothing is computed from the settings, so they never make a
// certificate unreadable); the written object has the same keys.
func TestSettingsJSON(t *testing.T) {
	for _, tc := range []struct {
		name  string
		in    string
		want  Settings
		other []string // keys expected in Other
	}{
		{"empty", `{}`, Settings{}, nil},
		// The report fixture's: some keys of two parts.
		{"missing keys", `{"degree": 3, "v_degree": 2, "seed": 1}`,
			Settings{Search: &SearchSettings{VDegree: 2, Seed: 1}, Field: &FieldSettings{Degree: 3}}, nil},
		// What fit.Certify wrote on its own (basin certify) before.
		{"certify's own", `{"v_degree": 4, "seed": 7, "growth": 14, "lp_samples": 3000, "fill": 1500, "kappa": 5}`,
			Settings{Search: &SearchSettings{VDegree: 4, Seed: 7, Growth: 14, LPSamples: 3000, Fill: 1500, Kappa: 5}}, nil},
		{"unknown keys", `{"folds": 3, "rise_tol": 0.02, "notes": {"by": "hand"}}`,
			Settings{Holdout: &HoldoutSettings{Folds: 3}}, []string{"notes", "rise_tol"}},
		{"unexpected types", `{"seed": "1", "all_folds": "yes", "beta": 1e-6}`,
			Settings{Holdout: &HoldoutSettings{Beta: 1e-6}}, []string{"all_folds", "seed"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var s Settings
			if err := json.Unmarshal([]byte(tc.in), &s); err != nil {
				t.Fatal(err)
			}
			var keys []string
			for k := range s.Other {
				keys = append(keys, k)
			}
			other := s.Other
			s.Other = nil
			if !sameParts(&s, &tc.want) {
				t.Errorf("got %s, want %s", dump(&s), dump(&tc.want))
			}
			if strings.Join(sorted(keys), ",") != strings.Join(tc.other, ",") {
				t.Errorf("Other keys %v, want %v", keys, tc.other)
			}
			s.Other = other
			var in map[string]any
			if err := json.Unmarshal([]byte(tc.in), &in); err != nil {
				t.Fatal(err)
			}
			if got := roundTrip(t, &s); !reflect.DeepEqual(got, in) && !(len(got) == 0 && len(in) == 0) {
				t.Errorf("written back %v, want %v", got, in)
			}
		})
	}
	// Not an object: the certificate is refused, like any mistyped field.
	var s Settings
	if err := json.Unmarshal([]byte(`[1, 2]`), &s); err == nil || !strings.Contains(err.Error(), "settings: want a JSON object, got an array") {
		t.Errorf("a settings array: err %v", err)
	}
}

// TestSettingsRecorded: Certify records its own options once, defaults
// filled in; the field's options come from FieldOptions.Settings.
func TestSettingsRecorded(t *testing.T) {
	o := (&CertifyOptions{Degree: 4, Growth: 3}).search()
	got := searchSettings(o)
	want := &SearchSettings{VDegree: 4, Seed: 1, Growth: 3, LPSamples: 3000, Fill: 1500, Kappa: 5}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("search settings %+v, want %+v", got, want)
	}
	for _, tc := range []struct {
		o    *FieldOptions
		want FieldSettings
	}{
		{nil, FieldSettings{Degree: 3, Derivative: DefaultDerivative, Bootstrap: 100, SelectFolds: 5, Seed: 1}},
		{&FieldOptions{Degree: 2, Bootstrap: -1, Folds: 4, Seed: 9, Derivative: DerivIntegral},
			FieldSettings{Degree: 2, Derivative: DerivIntegral, Bootstrap: 0, SelectFolds: 4, Seed: 9}},
	} {
		if got := tc.o.Settings(); !reflect.DeepEqual(*got, tc.want) {
			t.Errorf("%+v: settings %+v, want %+v", tc.o, *got, tc.want)
		}
	}
}

func roundTrip(t *testing.T, s *Settings) map[string]any {
	t.Helper()
	b, err := json.Marshal(s)
	if err != nil {
		t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(b, &m); err != nil {
		t.Fatal(err)
	}
	return m
}

// sameParts compares the parts of a and b (not what was read).
func sameParts(a, b *Settings) bool {
	return reflect.DeepEqual(a.Search, b.Search) && reflect.DeepEqual(a.Field, b.Field) &&
		reflect.DeepEqual(a.Holdout, b.Holdout) && reflect.DeepEqual(a.Command, b.Command) &&
		reflect.DeepEqual(a.Other, b.Other)
}

func dump(s *Settings) string {
	b, _ := json.Marshal(s)
	return string(b)
}

func sorted(s []string) []string {
	c := append([]string(nil), s...)
	for i := range c {
		for j := i + 1; j < len(c); j++ {
			if c[j] < c[i] {
				c[i], c[j] = c[j], c[i]
			}
		}
	}
	return c
}

// TestSettingsRecordedKeys: Recorded follows the JSON: a key read is
// recorded, a key its part lacked in the file is not, nor a zero value
// that means none.
func TestSettingsRecordedKeys(t *testing.T) {
	var s Settings
	if err := json.Unmarshal([]byte(`{"degree": 3, "all_folds": false}`), &s); err != nil {
		t.Fatal(err)
	}
	for key, want := range map[string]bool{"degree": true, "all_folds": true, "bootstrap": false, "folds": false, "v_degree": false, "nothing": false} {
		if got := s.Recorded(key); got != want {
			t.Errorf("read: Recorded(%q) = %v, want %v", key, got, want)
		}
	}
	fresh := Settings{Field: (*FieldOptions)(nil).Settings(), Command: &CommandSettings{Inputs: "logs/"}}
	for key, want := range map[string]bool{"bootstrap": true, "field_seed": true, "inputs": true, "model": false, "folds": false} {
		if got := fresh.Recorded(key); got != want {
			t.Errorf("fresh: Recorded(%q) = %v, want %v", key, got, want)
		}
	}
}
