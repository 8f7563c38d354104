package validate

import "basin.example/fit"

// recordSettings records in cert the options Evaluate used for the
// field fit and the held-out validation (o with defaults filled in);
// fit.Certify has recorded the search's.
func recordSettings(cert *fit.Certificate, o *Options) {
	if cert.Settings == nil {
		cert.Settings = &fit.Settings{}
	}
	cert.Settings.Field = o.Field.Settings()
	cert.Settings.Holdout = &fit.HoldoutSettings{Folds: o.Folds, Seed: o.Seed,
		MinDecrease: o.MinDecrease, Beta: o.Beta, AllFolds: o.AllFolds || !o.OneFold}
}
