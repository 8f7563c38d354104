package fit

import (
	"bytes"
	"encoding/json"
	"fmt"
	"reflect"
	"strings"

	"basin.example/fit/lyapunov"
)

// Settings records the options a certificate was made with. Each part is
// recorded once, by the code that used those options, with the defaults
// filled in; a part nobody recorded is nil (and absent from the JSON).
//
// In JSON the parts share one flat object under "settings", with the
// keys older files used (they held a plain object of these keys):
// Search's v_degree, seed, growth, lp_samples, fill, kappa; Field's
// degree, derivative, bootstrap, select_folds, field_seed; Holdout's
// folds, split_seed, min_decrease, beta, all_folds; Command's inputs,
// model.
// Reading accepts any older object: a missing key stays zero, and an
// unknown key or one whose value has an unexpected type is kept, as
// read, in Other (and written back).
type Settings struct {
	// Search holds the certificate search's options; set by [Certify].
	Search *SearchSettings
	// Field holds the field fit's options; set by the code that fitted
	// the model and certified it (package validate), nil when Certify is
	// given a model fitted elsewhere.
	Field *FieldSettings
	// Holdout holds the held-out validation's options; set by package
	// validate.
	Holdout *HoldoutSettings
	// Command holds what only the command line knows; set by the command
	// that wrote the file, never by a library.
	Command *CommandSettings
	// Other holds the keys of a file read that this version does not
	// know (or could not read as its type), as they were.
	Other map[string]json.RawMessage
	// absent lists, after reading, the keys of a part read that the
	// file lacked; they are left out when it is written back.
	absent map[string]bool
}

// Recorded reports whether the settings hold key, as their JSON does: a
// part that has it was recorded (with a value, where a zero one means
// none) or read from a file that had it.
func (s *Settings) Recorded(key string) bool {
	if s == nil || s.absent[key] {
		return false
	}
	for _, p := range s.parts() {
		v := reflect.ValueOf(p).Elem()
		if v.IsNil() {
			continue
		}
		part := v.Elem()
		for i := 0; i < part.NumField(); i++ {
			f := part.Type().Field(i)
			if tagKey(f) == key {
				return !strings.Contains(f.Tag.Get("json"), ",omitempty") || !part.Field(i).IsZero()
			}
		}
	}
	return false
}

func tagKey(f reflect.StructField) string {
	k, _, _ := strings.Cut(f.Tag.Get("json"), ",")
	return k
}

// SearchSettings are the certificate search's options, defaults filled
// in (see [CertifyOptions]).
type SearchSettings struct {
	VDegree   int     `json:"v_degree,omitempty"`
	Seed      uint64  `json:"seed,omitempty"`
	Growth    int     `json:"growth,omitempty"`
	LPSamples int     `json:"lp_samples,omitempty"`
	Fill      int     `json:"fill,omitempty"`
	Kappa     float64 `json:"kappa,omitempty"`
}

// FieldSettings are the field fit's options, defaults filled in (see
// [FieldOptions]).
type FieldSettings struct {
	Degree int `json:"degree,omitempty"`
	// InputDegree is FieldOptions.InputDegree when above its default 1;
	// 0 (absent) means 1.
	InputDegree int    `json:"input_degree,omitempty"`
	Derivative  string `json:"derivative,omitempty"`
	// Bootstrap is the number of bootstrap refits; 0 means none.
	Bootstrap int `json:"bootstrap"`
	// SelectFolds is FieldOptions.Folds: the threshold's inner
	// cross-validation folds.
	SelectFolds int    `json:"select_folds,omitempty"`
	Seed        uint64 `json:"field_seed,omitempty"`
}

// HoldoutSettings are the held-out validation's options, defaults filled
// in (package validate's Options).
type HoldoutSettings struct {
	Folds       int     `json:"folds,omitempty"`
	Seed        uint64  `json:"split_seed,omitempty"`
	MinDecrease float64 `json:"min_decrease,omitempty"`
	Beta        float64 `json:"beta,omitempty"`
	// AllFolds says every fold was held out once (false: only the
	// released split was fitted).
	AllFolds bool `json:"all_folds"`
}

// CommandSettings are the facts only the command line knows.
type CommandSettings struct {
	// Inputs are the INPUTS as given, joined by spaces.
	Inputs string `json:"inputs,omitempty"`
	// Model is the model file certified (basin certify's --model).
	Model string `json:"model,omitempty"`
}

// searchSettings records the search's options o (defaults filled in).
func searchSettings(o lyapunov.Options) *SearchSettings {
	return &SearchSettings{VDegree: o.Degree, Seed: o.Seed, Growth: o.Growth,
		LPSamples: o.LPSamples, Fill: o.Fill, Kappa: o.Kappa}
}

// Settings returns the options Field uses for o, defaults filled in, as
// a certificate records them. A nil o gives the defaults.
func (o *FieldOptions) Settings() *FieldSettings {
	r := o.withDefaults()
	fs := &FieldSettings{Degree: r.Degree, Derivative: r.Derivative, Bootstrap: max(r.Bootstrap, 0),
		SelectFolds: r.Folds, Seed: r.Seed}
	if r.InputDegree > 1 {
		fs.InputDegree = r.InputDegree
	}
	return fs
}

// parts returns pointers to the part fields of s, in a fixed order.
func (s *Settings) parts() []any {
	return []any{&s.Search, &s.Field, &s.Holdout, &s.Command}
}

// MarshalJSON writes the parts recorded and Other as one object, keys
// sorted (a key of a part wins over the same key in Other).
func (s Settings) MarshalJSON() ([]byte, error) {
	all := make(map[string]json.RawMessage, 16)
	for k, v := range s.Other {
		all[k] = v
	}
	for _, p := range s.parts() {
		v := reflect.ValueOf(p).Elem() // *T
		if v.IsNil() {
			continue
		}
		b, err := json.Marshal(v.Interface())
		if err != nil {
			return nil, err
		}
		var m map[string]json.RawMessage
		if err := json.Unmarshal(b, &m); err != nil {
			return nil, err
		}
		for k, x := range m {
			if !s.absent[k] {
				all[k] = x
			}
		}
	}
	return json.Marshal(all) // encoding/json sorts map keys
}

// UnmarshalJSON reads a settings object of any version: each key a part
// knows goes into that part (allocated when it has a key), the rest into
// Other. A value of an unexpected type is kept in Other, not an error:
// the settings are a record, nothing is computed from them.
func (s *Settings) UnmarshalJSON(b []byte) error {
	if bytes.Equal(bytes.TrimSpace(b), []byte("null")) {
		return nil
	}
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(b, &raw); err != nil {
		kind := "a number"
		switch t := bytes.TrimSpace(b); {
		case len(t) == 0:
			kind = "nothing"
		case t[0] == '[':
			kind = "an array"
		case t[0] == '"':
			kind = "a string"
		case t[0] == 't' || t[0] == 'f':
			kind = "a boolean"
		}
		return fmt.Errorf("settings: want a JSON object, got %s", kind)
	}
	*s = Settings{}
	for _, p := range s.parts() {
		ptr := reflect.ValueOf(p).Elem() // the *T field
		part := reflect.New(ptr.Type().Elem()).Elem()
		found := false
		var missing []string
		for i := 0; i < part.NumField(); i++ {
			key := tagKey(part.Type().Field(i))
			v, ok := raw[key]
			if !ok || json.Unmarshal(v, part.Field(i).Addr().Interface()) != nil {
				missing = append(missing, key) // a mistyped value stays in Other
				continue
			}
			delete(raw, key)
			found = true
		}
		if !found {
			continue
		}
		ptr.Set(part.Addr())
		for _, k := range missing {
			if s.absent == nil {
				s.absent = map[string]bool{}
			}
			s.absent[k] = true
		}
	}
	if len(raw) > 0 {
		s.Other = raw
	}
	return nil
}
