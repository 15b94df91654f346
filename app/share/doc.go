// Package share encodes the calculator's whole state (model text,
// per-parameter options, view choices) into a URL fragment and decodes it
// back, rejecting broken, hostile, oversized and future-version links with
// errors that say what is wrong.
//
// A fragment is "b" + version + "." + base64url(deflate(JSON)), for example
// "#b1.y0pNLs...". The JSON field names are short to keep links short.
package share
