// Package examples holds bellcheck's gallery: small scenarios of our own,
// with invented data, each written in the model language and described in
// one line saying what it shows.
package examples
