// Package paramopt reads the per-parameter options of an analysis (the
// fitting scale, the grid's points, the grid's box) written as text, in one
// syntax for the command line's flags and for a model file's own setting
// lines, and checks them against a model:
//
//	--scale s=log     --points s=401     --box m=-5:5      (flags)
//	#@ scale s=log    #@ points s=401    #@ box m=-5:5     (lines in the model file)
//
// A box side may be left out (m=-5: or m=:5) to keep that side automatic.
// Several settings may share a flag or a line (--points a=101,b=201;
// #@ points a=101 b=201). Write does the reverse: the setting lines that
// carry an analysis's options, so that a model file reproduces it.
package paramopt
