// Package rescalecheck holds the comparison the window's and the report's
// tests make between what they show for a model and for the same model
// with filters rescaled (cnn.Model.WithFiltersRescaled), which changes no
// prediction: every shown text must stay the same, while the raw values
// behind them move, so that the check can catch a raw number shown.
package rescalecheck
