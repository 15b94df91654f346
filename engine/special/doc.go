// Package special provides the scalar special functions of bellcheck's model
// language, with the derivatives the evaluator needs: log|Gamma| and the
// polygamma functions of orders 0 to 3, and the numerically stable logistic,
// softplus and log-sum-exp.
package special
