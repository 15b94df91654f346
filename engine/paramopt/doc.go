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
//
// Two more kinds of line are not per-parameter:
//
//	#@ vary k=0.1:5                                  (--vary k=0.1:5)
//	#@ gaussian mine mean.x=1 mean.y=0 sd.x=0.5 sd.y=2 corr.x.y=0.3
//	                              (--gaussian "mine mean.x=1 mean.y=0 ...")
//
// vary marks a scalar constant of the model (not a parameter) as one to
// move over a range (engine.Vary: a slider on the page, a sweep on the
// command line). gaussian gives a candidate Gaussian of the user's own
// (engine.Candidate), on the original scale: a mean for every parameter,
// and either an sd for every parameter with correlations (0 where left
// out) or a variance cov.P.P for every parameter with covariances
// cov.P.Q. Lines with the same name add to one candidate. Lines reads the
// vary lines with the others; CandidateLines and Candidates read the
// gaussian lines.
package paramopt
