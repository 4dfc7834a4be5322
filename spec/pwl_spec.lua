-- The PWL model: construction, evaluation rules, companions, inverse,
-- canonical form, comparison with curves.
local sw = require "segwise"

describe("segwise.pwl", function()
  local m -- 0..1 rising gently, 1..2 steeply, 2..4 flat
  before_each(function()
    m = sw.pwl { x = { 0, 1, 2, 4 }, y = { 0, 1, 5, 5 } }
  end)

  describe("construction", function()
    it("validates knots and names the index at fault", function()
      for _, case in ipairs {
        { { x = { 0, 1, 1 }, y = { 0, 1, 2 } }, "x%[3%] = 1 after x%[2%] = 1" },
        { { x = { 0, 2, 1 }, y = { 0, 1, 2 } }, "strictly increasing" },
        { { x = { 0, 1 }, y = { 0, 1, 2 } }, "2 values but y has 3" },
        { { x = { 0 }, y = { 0 } }, "at least 2" },
        { { x = { 0, 0 / 0 }, y = { 0, 1 } }, "x%[2%] is not finite" },
        { { x = { 0, 1 }, y = { 0, math.huge } }, "y%[2%] is not finite" },
        { { x = { 0, "a" }, y = { 0, 1 } }, "x%[2%] must be a number" },
        { { x = { 0, 1 }, y = { 0, 1 }, extend = "wrap" }, "option extend" },
        { { x = { 0, 1 } }, "x and y are required" },
        { { x = {}, y = {} }, "at least 2" },
      } do
        local ok, msg = pcall(sw.pwl, case[1])
        assert.is_false(ok)
        assert.matches(case[2], msg)
      end
    end)

    it("builds a discontinuous model from segments and checks they join", function()
      local d = sw.pwl.segments {
        { lo = 0, hi = 1, slope = 1, intercept = 0 },
        { lo = 1, hi = 2, slope = 0, intercept = 3 },
      }
      assert.is_false(d:is_continuous())
      assert.are.equal(0.5, d(0.5))
      -- Rule: at an interior knot of a discontinuous model the value is the
      -- right-hand segment's (the segment that starts there).
      assert.are.equal(3, d(1))
      assert.are.equal(2, d:segment(1))
      local _, ys, left = d:knots()
      assert.are.same({ 0, 3, 3 }, ys)
      assert.are.same({ 0, 1, 3 }, left)
      local ok, msg = pcall(sw.pwl.segments, {
        { lo = 0, hi = 1, slope = 1, intercept = 0 },
        { lo = 1.5, hi = 2, slope = 0, intercept = 3 } })
      assert.is_false(ok); assert.matches("segments must join", msg)
      ok, msg = pcall(sw.pwl.segments, { { lo = 0, hi = 1, slope = "x", intercept = 0 } })
      assert.is_false(ok); assert.matches("segment 1: slope must be a number", msg)
    end)

    it("refuses absurd segment counts quickly", function()
      assert.has_error(function() sw.pwl.segments({}) end)
    end)
  end)

  describe("evaluation", function()
    it("evaluates numbers and tables, exact at the knots", function()
      assert.are.equal(5, m(2))
      assert.are.equal(3, m(1.5))
      assert.are.same({ 0, 0.5, 3, 5 }, m:eval { 0, 0.5, 1.5, 3 })
      assert.are.equal(3, #m)
    end)

    it("extends outside the knots by line, hold or error", function()
      assert.are.equal(-1, m(-1))
      assert.are.equal(5, m(10))
      m:extend("hold")
      assert.are.equal(0, m(-1))
      assert.are.equal(0, m:slope(-1))
      m:extend("error")
      local ok, msg = pcall(m, 4.5)
      assert.is_false(ok); assert.matches("outside the model's knots", msg)
      assert.has_error(function() m:segment(-1) end)
      assert.are.equal("error", m:extend())
    end)

    it("locates segments 1-based with the right-hand rule at knots", function()
      assert.are.equal(1, m:segment(0))
      assert.are.equal(2, m:segment(1))
      assert.are.equal(3, m:segment(4))
      assert.are.equal(4, m:slope(1.5))
      assert.has_error(function() m(0 / 0) end)
    end)

    it("finds segments in long models (binary search path)", function()
      local xs, ys = {}, {}
      for k = 0, 100 do xs[#xs + 1] = k; ys[#ys + 1] = k * k end
      local big = sw.pwl { x = xs, y = ys }
      for _, x in ipairs { 0, 0.5, 37.2, 99.99, 100 } do
        local k = math.min(math.floor(x), 99)
        assert.are.equal(k + 1, big:segment(x))
        local y = k * k + (2 * k + 1) * (x - k)
        assert.is.near(y, big(x), 1e-9)
      end
    end)
  end)

  describe("segments and companions", function()
    it("gives each segment's line and its Thevenin and Norton forms", function()
      local s = m:seg(2)
      assert.are.same({ 1, 2, 4, -3 }, { s.lo, s.hi, s.slope, s.intercept })
      local e, r = m:thevenin(2)
      assert.are.same({ -3, 4 }, { e, r })
      local j, g = m:norton(2) -- x = j + g*y  <=> y = (x - j)/g
      assert.is.near(0.75, j, 1e-15); assert.is.near(0.25, g, 1e-15)
      local ok, msg = pcall(m.norton, m, 3)
      assert.is_false(ok); assert.matches("segment 3 is flat", msg)
      ok, msg = pcall(m.seg, m, 4)
      assert.is_false(ok); assert.matches("outside 1..3", msg)
    end)
  end)

  describe("inverse", function()
    it("swaps the axes of a strictly increasing model", function()
      local f = sw.pwl { x = { 0, 1, 2 }, y = { 1, 3, 4 } }
      local inv = f:inverse()
      for _, x in ipairs { 0, 0.3, 1, 1.7, 2 } do assert.is.near(x, inv(f(x)), 1e-15) end
      -- the inverse of the inverse is the model
      local back = inv:inverse()
      local xs, ys = back:knots()
      assert.are.same({ 0, 1, 2 }, xs); assert.are.same({ 1, 3, 4 }, ys)
    end)

    it("handles decreasing models", function()
      local f = sw.pwl { x = { 0, 1, 3 }, y = { 5, 3, 2 } }
      local inv = f:inverse()
      for _, x in ipairs { 0, 0.5, 2, 3 } do assert.is.near(x, inv(f(x)), 1e-15) end
    end)

    it("names the segment that breaks monotonicity", function()
      local ok, msg = pcall(m.inverse, m)
      assert.is_false(ok); assert.matches("segment 3", msg)
    end)
  end)

  describe("canonical form", function()
    it("reproduces the model: y = a + b x + sum c |x - beta|", function()
      local a, b, c, beta = m:canonical()
      for x = -1, 5, 0.25 do
        local y = a + b * x
        for i = 1, #c do y = y + c[i] * math.abs(x - beta[i]) end
        assert.is.near(m(x), y, 1e-12)
      end
      assert.are.same({ 1, 2 }, beta)
    end)
    it("needs a continuous model", function()
      local d = sw.pwl.segments { { lo = 0, hi = 1, slope = 1, intercept = 0 },
                                  { lo = 1, hi = 2, slope = 0, intercept = 3 } }
      assert.has_error(function() d:canonical() end)
    end)
  end)

  describe("compare", function()
    it("reads errors at the samples of a sampled curve", function()
      local c = sw.curve.samples({ 0.5, 1, 2, 4 }, { 0.6, 1, 5, 4 })
      local r = m:compare(c)
      assert.is.near(1, r.max_abs, 1e-15); assert.are.equal(4, r.x_abs)
      assert.is.near(0.25, r.max_rel, 1e-15); assert.are.equal(4, r.x_rel)
      assert.is.near(math.sqrt((0.01 + 1) / 4), r.rms, 1e-15)
    end)

    it("refines the maximum of an analytic curve off the grid", function()
      -- chord of x^2 on [0, 1]: error x - x^2, largest 1/4 at x = 1/2
      local c = sw.curve.power { k = 1, n = 2 }
      local chord = sw.pwl { x = { 0, 1 }, y = { 0, 1 } }
      local r = chord:compare(c, { lo = 0, hi = 1, n = 7 })
      assert.is.near(0.25, r.max_abs, 1e-14)
      assert.is.near(0.5, r.x_abs, 1e-6)
      -- rms of x - x^2 on [0, 1] is sqrt(1/30); trapezoid on 7 points is coarse
      assert.is.near(math.sqrt(1 / 30), chord:compare(c, { lo = 0, hi = 1, n = 20001 }).rms, 1e-8)
      assert.is_nil(r.max_rel) -- the curve is 0 at x = 0
      assert.matches("rel_floor", r.rel_note)
      local r2 = chord:compare(c, { lo = 0, hi = 1, rel_floor = 0.1 })
      assert.is_true(r2.max_rel > 0)
    end)

    it("checks its options", function()
      local c = sw.curve.power { k = 1, n = 2 }
      assert.has_error(function() m:compare(c, { lo = 2, hi = 1 }) end)
      assert.has_error(function() m:compare(c, { n = 0 / 0 }) end)
      assert.has_error(function() m:compare(42) end)
    end)

    it("passes a curve function's error through", function()
      local c = sw.curve.fn(function(x) if x > 0.5 then error("probe fault") end return x end,
        { lo = 0, hi = 1 })
      local ok, msg = pcall(m.compare, m, c)
      assert.is_false(ok); assert.matches("probe fault", msg)
    end)
  end)

  it("prints a readable table", function()
    local s = tostring(m)
    assert.matches("3 segments, continuous", s)
    assert.matches("slope", s)
  end)

  it("errors after free() and frees once", function()
    m:free(); m:free()
    local ok, msg = pcall(m, 1)
    assert.is_false(ok); assert.matches("after free", msg)
    assert.matches("freed", tostring(m))
  end)

  it("has no fit info unless it was fitted", function()
    assert.is_nil(m:fit_info())
  end)
end)

describe("segwise.pwl eval into an array", function()
  it("writes into out, in place too, and checks sizes", function()
    local m = sw.pwl { x = { 0, 1, 2 }, y = { 0, 2, 3 } }
    local x = sw.array { 0.5, 1.5, 3 }
    local out = sw.array(3)
    assert.are.equal(out, m:eval(x, out))
    assert.are.same({ 1, 2.5, 4 }, out:totable())
    assert.are.equal(x, m:eval(x, x)) -- in place
    assert.are.same({ 1, 2.5, 4 }, x:totable())
    assert.are.same({ 1, 2.5 }, m:eval({ 0.5, 1.5 }, sw.array(2)):totable())
    local ok, msg = pcall(m.eval, m, sw.array(5), sw.array(2))
    assert.is_false(ok); assert.matches("out has 2 values but x has 5", msg)
    ok, msg = pcall(m.eval, m, x, { 1, 2, 3 })
    assert.is_false(ok); assert.matches("out must be a segwise array", msg)
  end)
end)
