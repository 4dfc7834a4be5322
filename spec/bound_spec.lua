-- The stated error is an upper bound (issue 11, section 1): m:compare and
-- fit_info() state the largest error exactly against piecewise-linear truths
-- (sampled curves, models) and refine it to 1e-9 against laws and functions.
local sw = require "segwise"

-- The linear interpolant of samples xs, ys at x (our own, not the module's).
local function interp(xs, ys, x)
  for i = 1, #xs - 1 do
    if x <= xs[i + 1] then
      local t = (x - xs[i]) / (xs[i + 1] - xs[i])
      return ys[i] + t * (ys[i + 1] - ys[i])
    end
  end
  return ys[#ys]
end

-- Largest relative error of a continuous model against the interpolant,
-- over the given points.
local function max_rel_at(m, xs, ys, pts)
  local best = 0
  for _, x in ipairs(pts) do
    local f = interp(xs, ys, x)
    best = math.max(best, math.abs(m(x) - f) / math.abs(f))
  end
  return best
end

local function union(a, b)
  local all, seen = {}, {}
  for _, list in ipairs { a, b } do
    for _, x in ipairs(list) do
      if not seen[x] then seen[x] = true; all[#all + 1] = x end
    end
  end
  table.sort(all)
  return all
end

describe("stated error", function()
  describe("against sampled curves (exact)", function()
    it("sees a model's knot between samples", function()
      -- the model peaks at 1 at x = 0.5 where the curve (all zero) has no sample
      local m = sw.pwl { x = { 0, 0.5, 2 }, y = { 0, 1, 0 } }
      local r = m:compare(sw.curve.samples({ 0, 1, 2 }, { 0, 0, 0 }))
      assert.is.near(1, r.max_abs, 1e-15) -- the knot's height, by construction
      assert.are.equal(0.5, r.x_abs)
      assert.are.equal("exact", r.checked)
    end)

    it("states a relative lsq fit of 21 diode samples at its worst point", function()
      local d = sw.curve.diode { is = 1e-12, n = 1.8 }
      local xs, ys = {}, {}
      for i = 0, 20 do xs[i + 1] = 0.5 + 0.3 * i / 20; ys[i + 1] = d(xs[i + 1]) end
      local m = sw.fit(sw.curve.samples(xs, ys), { segments = 3, criterion = "lsq", error = "rel" })
      local info, kx = m:fit_info(), m:knots()
      -- truth: the union of sample abscissae and model knots, evaluated here
      local truth = max_rel_at(m, xs, ys, union(xs, kx))
      local at_samples = max_rel_at(m, xs, ys, xs)
      assert.is_true(at_samples < 0.9 * truth) -- the knots matter in this case
      assert.is.near(truth, info.max_rel, 1e-12 * truth)
      assert.are.equal("exact", info.checked)
      -- between knots the relative error of a line against a line is a ratio
      -- of lines, monotone: a dense scan finds nothing above the stated value
      local dense = {}
      for i = 0, 100000 do dense[#dense + 1] = 0.5 + 0.3 * i / 100000 end
      local scan = max_rel_at(m, xs, ys, dense)
      assert.is_true(scan <= info.max_rel * (1 + 1e-12))
      assert.is.near(info.max_rel, scan, 1e-4 * info.max_rel) -- the scan's step is 3e-6
      local worst = 0
      for _, s in ipairs(info.per_segment) do worst = math.max(worst, s.max_rel) end
      assert.is.near(info.max_rel, worst, 1e-12 * worst)
    end)

    it("counts a jump's one-sided limit", function()
      -- y = 2x on [0, 1), then 0.5: the error 1.5x against y = x/2 tends to
      -- 1.5 as x reaches 1 from the left (worked by hand)
      local m = sw.pwl.segments {
        { lo = 0, hi = 1, slope = 2, intercept = 0 },
        { lo = 1, hi = 2, slope = 0, intercept = 0.5 } }
      local r = m:compare(sw.curve.samples({ 0, 2 }, { 0, 1 }))
      assert.is.near(1.5, r.max_abs, 1e-15)
      assert.are.equal(1, r.x_abs)
      assert.is.near(1.5, math.abs(m(1 - 1e-9) - (1 - 1e-9) / 2), 1e-8) -- approached, not reached
    end)

    it("finds the relative error where the curve crosses rel_floor", function()
      -- curve y = x - 1 on [0, 2], model 0.1, floor 0.5: inside |y| < 0.5 the
      -- error is |1.1 - x| / 0.5, largest 1.2 at x = 0.5 (worked by hand)
      local m = sw.pwl { x = { 0, 2 }, y = { 0.1, 0.1 } }
      local r = m:compare(sw.curve.samples({ 0, 2 }, { -1, 1 }), { rel_floor = 0.5 })
      assert.is.near(1.2, r.max_rel, 1e-14)
      assert.is.near(0.5, r.x_rel, 1e-14)
    end)

    it("leaves the relative error undefined where the curve crosses 0 between samples", function()
      local m = sw.pwl { x = { 0, 2 }, y = { 0.1, 0.1 } }
      local r = m:compare(sw.curve.samples({ 0, 2 }, { -1, 1 }))
      assert.is_nil(r.max_rel)
      assert.matches("near x = 1", r.rel_note)
    end)
  end)

  describe("against models (exact)", function()
    it("compares two models on the union of their knots", function()
      local a = sw.pwl { x = { 0, 0.5, 2 }, y = { 0, 1, 0 } }
      local b = sw.pwl { x = { 0, 1, 2 }, y = { 0, 1, 0 } }
      local r = a:compare(b)
      -- at x = 0.5: a = 1, b = 0.5 (worked by hand)
      assert.is.near(0.5, r.max_abs, 1e-15); assert.are.equal(0.5, r.x_abs)
      assert.are.equal("exact", r.checked)
      -- rms over [0, 2] of the piecewise-linear difference, by a fine midpoint sum
      local sum, n = 0, 200000
      for i = 1, n do local x = 2 * (i - 0.5) / n; sum = sum + (a(x) - b(x)) ^ 2 end
      assert.is.near(math.sqrt(sum / n), r.rms, 1e-9)
      assert.are.equal(0, a:compare(a).max_abs)
    end)

    it("refuses a range outside the reference model's knots", function()
      local a = sw.pwl { x = { 0, 2 }, y = { 0, 1 } }
      local b = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
      assert.has_error(function() a:compare(b, { lo = 0, hi = 2 }) end,
        "segwise.model:compare: range [0, 2] is outside the reference model's knots [0, 1]")
    end)
  end)

  describe("against laws and functions (refined)", function()
    local e = math.exp(1)

    it("states the chord of e^x on [0, 1] to 1e-9, never below", function()
      -- chord 1 + (e-1)x: error largest at x = ln(e-1), 2 - e + (e-1)ln(e-1);
      -- relative error (1 + (e-1)x)e^-x - 1 largest at x = (e-2)/(e-1), there
      -- (e-1)e^-x - 1 (standard calculus: the derivative's zero)
      local abs_true = 2 - e + (e - 1) * math.log(e - 1)
      local rel_true = (e - 1) * math.exp(-(e - 2) / (e - 1)) - 1
      local chord = sw.pwl { x = { 0, 1 }, y = { 1, e } }
      for _, n in ipairs { 5, 2001 } do
        local r = chord:compare(sw.curve.fn(math.exp, { lo = 0, hi = 1 }), { n = n })
        assert.is.near(abs_true, r.max_abs, 1e-9 * abs_true)
        assert.is_true(r.max_abs <= abs_true * (1 + 1e-15))
        assert.is.near(math.log(e - 1), r.x_abs, 1e-6)
        assert.is.near(rel_true, r.max_rel, 1e-9 * rel_true)
        assert.is_true(r.max_rel <= rel_true * (1 + 1e-15))
        assert.are.equal("refined", r.checked)
      end
    end)

    it("states the best line to e^x on [0, 1] in fit_info", function()
      -- the Chebyshev line has the chord's slope and half the chord's gap
      local want = (2 - e + (e - 1) * math.log(e - 1)) / 2
      local m = sw.fit(sw.curve.fn(math.exp, { lo = 0, hi = 1 }), { segments = 1 })
      local info = m:fit_info()
      assert.is.near(want, info.max_abs, 1e-9 * want)
      assert.are.equal("refined", info.checked)
    end)

    it("states the relative error of a chord of x^2 off the grid", function()
      -- chord (a+b)x - ab of x^2 on [a, b]: relative error largest at the
      -- harmonic mean 2ab/(a+b), where it is (b-a)^2/(4ab) (standard calculus);
      -- the absolute error (b-a)^2/4 at the middle
      local a, b = 0.3, 1.7
      local chord = sw.pwl { x = { a, b }, y = { a * a, b * b } }
      local r = chord:compare(sw.curve.power { k = 1, n = 2 }, { lo = a, hi = b, n = 7 })
      local rel_true = (b - a) ^ 2 / (4 * a * b)
      assert.is.near(rel_true, r.max_rel, 1e-9 * rel_true)
      assert.is.near(2 * a * b / (a + b), r.x_rel, 1e-6)
      assert.is.near((b - a) ^ 2 / 4, r.max_abs, 1e-9 * (b - a) ^ 2 / 4)
    end)

    -- A peak of height 1 and half-width w at c, on a zero curve.
    local function peak(c, w)
      return sw.curve.fn(function(x) return 1 / (1 + ((x - c) / w) ^ 2) end, { lo = 0, hi = 1 })
    end
    local zero = sw.pwl { x = { 0, 1 }, y = { 0, 0 } }
    local h = 1 / 2000 -- the default grid's spacing (n = 2001 on [0, 1])

    local function grid_max(c)
      local best = 0
      for i = 0, 2000 do best = math.max(best, math.abs(c(i / 2000))) end
      return best
    end

    it("finds a sharp peak in the first grid interval", function()
      local c = peak(0.3 * h, 0.01 * h)
      assert.is_true(grid_max(c) < 0.002) -- the grid alone sees 1/901 at x = 0
      local r = zero:compare(c)
      assert.is.near(1, r.max_abs, 1e-9)
      assert.is.near(0.3 * h, r.x_abs, 1e-3 * h)
    end)

    it("finds a sharp peak midway between two grid points", function()
      local c = peak(0.25 + 0.5 * h, 0.01 * h)
      assert.is_true(grid_max(c) < 0.001)
      assert.is.near(1, zero:compare(c).max_abs, 1e-9)
    end)

    it("takes a finer grid from n for features narrower than its spacing", function()
      -- a Gaussian of width h/100 leaves the default grid at exp(-2500) = 0
      local c = sw.curve.fn(function(x)
        return math.exp(-((x - 0.25 - 0.5 * h) / (0.01 * h)) ^ 2)
      end, { lo = 0, hi = 1 })
      assert.is_true(zero:compare(c).max_abs < 1e-100)
      local fine = zero:compare(c, { n = 200001 })
      assert.is.near(1, fine.max_abs, 1e-9)
      assert.is_true(fine.points >= 200001)
    end)
  end)
end)

-- Our own equal-error construction for a convex law f with derivative df:
-- on [a, b] the best line is the chord moved halfway to the parallel
-- tangent (Chebyshev equioscillation), its error half the chord's gap; the
-- optimal discontinuous n-segment model gives every segment one level.
local function best_line_error(f, df, a, b)
  local s = (f(b) - f(a)) / (b - a)
  local lo, hi = a, b -- df(xi) = s, df increasing
  for _ = 1, 200 do
    local mid = 0.5 * (lo + hi)
    if df(mid) < s then lo = mid else hi = mid end
  end
  local xi = 0.5 * (lo + hi)
  return 0.5 * math.abs(f(a) + s * (xi - a) - f(xi))
end

local function equal_error_level(f, df, lo, hi, n)
  local function covers(level)
    local a = lo
    for _ = 1, n do
      if best_line_error(f, df, a, hi) <= level then return true end
      local l, r = a, hi
      for _ = 1, 100 do
        local mid = 0.5 * (l + r)
        if best_line_error(f, df, a, mid) <= level then l = mid else r = mid end
      end
      a = l
    end
    return false
  end
  local l, r = 0, best_line_error(f, df, lo, hi)
  for _ = 1, 60 do
    local mid = 0.5 * (l + r)
    if covers(mid) then r = mid else l = mid end
  end
  return r
end

describe("optimal knots (minimax, discontinuous)", function()
  it("reach the equal-error optimum of e^x on [0, 3] with 4 segments", function()
    local want = equal_error_level(math.exp, math.exp, 0, 3, 4) -- 0.19027 (issue 11)
    local m = sw.fit(sw.curve.fn(math.exp, { lo = 0, hi = 3 }),
      { segments = 4, continuous = false, knots = "optimal" })
    local got = m:fit_info().max_abs
    assert.is.near(want, got, 1e-5 * want)
    assert.is_true(got >= want * (1 - 1e-9)) -- nothing beats the optimum
  end)

  it("reach it for a diode law on [0.5, 0.9] with 5 segments", function()
    local d = sw.curve.diode { is = 1e-12, n = 1.8 }
    local want = equal_error_level(function(x) return d(x) end, function(x) return d:deriv(x) end,
      0.5, 0.9, 5)
    local got = sw.fit(d, { lo = 0.5, hi = 0.9, segments = 5, continuous = false }):fit_info()
    assert.is.near(want, got.max_abs, 1e-5 * want)
    assert.is_true(got.max_abs >= want * (1 - 1e-9))
  end)
end)
