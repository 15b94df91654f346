// The banana density of engine/eval's grid benchmark, written by hand in
// JavaScript: log p(x, y) = -x^2/200 - (y + 0.05 x^2 - 5)^2 / 2. The
// harness compares its throughput on the grid with the compiled model and
// with a general-purpose expression library.
"use strict";

// The model text the page's engine compiles, and the same formula for the
// expression library.
const bananaModel = "param x\nparam y\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n";
const bananaExpr = "-x^2/200 - (y + 0.05*x^2 - 5)^2/2";
// The same density with the grid's box as the parameters' supports (the
// form the page's timeGrid hook takes; it evaluates the box's cells).
const bananaBoxed = "param x in [-20, 20]\nparam y in [-10, 15]\n-x^2/200 - (y + 0.05*x^2 - 5)^2/2\n";

function bananaHand(x, y) {
  const u = y + 0.05 * x * x - 5;
  return -x * x / 200 - u * u / 2;
}

// gridColumns returns the centres of an n x n grid of cells over
// [-20, 20] x [-10, 15] as two columns (x varies slowest): the box of
// engine/eval's banana benchmark, and the points the page's timeGrid hook
// evaluates for a model with these supports.
function gridColumns(n) {
  const xs = new Float64Array(n * n), ys = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) {
      xs[i * n + j] = -20 + 40 * (i + 0.5) / n;
      ys[i * n + j] = -10 + 25 * (j + 0.5) / n;
    }
  }
  return [xs, ys];
}

// timeBest runs pass reps times and returns the fastest time in ms.
function timeBest(pass, reps) {
  let best = Infinity;
  for (let r = 0; r < reps; r++) {
    const t0 = performance.now();
    pass();
    best = Math.min(best, performance.now() - t0);
  }
  return best;
}

function finiteSum(out) {
  let s = 0;
  for (const v of out) if (Number.isFinite(v)) s += v;
  return s;
}

// benchHand times the hand-written function over the grid.
function benchHand(n, reps) {
  const [xs, ys] = gridColumns(n);
  const out = new Float64Array(n * n);
  const ms = timeBest(() => {
    for (let i = 0; i < xs.length; i++) out[i] = bananaHand(xs[i], ys[i]);
  }, reps);
  return {ns_per_point: 1e6 * ms / (n * n), sum: finiteSum(out)};
}

// benchMathjs times the library's compiled expression over the grid, one
// evaluate call per point with a reused scope (its documented use).
function benchMathjs(n, reps) {
  const [xs, ys] = gridColumns(n);
  const out = new Float64Array(n * n);
  const code = math.compile(bananaExpr);
  const scope = {x: 0, y: 0};
  const ms = timeBest(() => {
    for (let i = 0; i < xs.length; i++) {
      scope.x = xs[i];
      scope.y = ys[i];
      out[i] = code.evaluate(scope);
    }
  }, reps);
  return {ns_per_point: 1e6 * ms / (n * n), sum: finiteSum(out), version: math.version};
}
