package main

import "context"

// addStubs registers the contract's commands whose work has not landed
// yet; they answer "not built yet" (exit 3). It runs after every init.
func addStubs() {
	for _, s := range []struct{ name, usage, short string }{
		{"run", "basin run [flags] INPUTS...", "the whole job: fit, certify, validate, report"},
		{"fit", "basin fit [flags] INPUTS...", "fit the vector field only; writes model.json"},
		{"certify", "basin certify --model model.json [flags] INPUTS...", "fit a Lyapunov certificate; writes certificate.json"},
		{"check", "basin check --cert certificate.json [flags] INPUTS...", "validate a certificate on runs it has not seen"},
		{"screen", "basin screen --cert certificate.json [flags] INPUTS...", "flag runs whose V rises, that leave the region, or that do not settle"},
		{"export", "basin export --cert certificate.json --lang go|c|python", "write a dependency-free function that evaluates V"},
		{"inspect", "basin inspect [flags] INPUTS...", "say what the logs hold"},
		{"demo", "basin demo [--out DIR]", "write the demo data set and run the job on it"},
	} {
		if lookup(s.name) != nil {
			continue
		}
		register(&command{Name: s.name, Usage: s.usage, Short: s.short,
			Run: func(context.Context, *env, any, []string) error { return errNotBuilt }})
	}
}
