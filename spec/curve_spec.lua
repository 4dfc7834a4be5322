-- Curves: construction, evaluation, derivatives, errors.
local sw = require "segwise"

describe("segwise.curve", function()
  describe("samples", function()
    it("interpolates linearly between samples and reports its domain", function()
      local c = sw.curve.samples({ 0, 1, 3 }, { 0, 2, 6 })
      assert.is.near(1, c(0.5), 1e-15)
      assert.is.near(4, c:eval(2), 1e-15)
      local lo, hi = c:domain()
      assert.are.equal(0, lo); assert.are.equal(3, hi)
      assert.are.same({ 0, 2, 6 }, c:eval { 0, 1, 3 })
    end)

    it("rejects x outside the sampled range", function()
      local c = sw.curve.samples({ 0, 1 }, { 0, 1 })
      assert.has_error(function() c(1.5) end)
      local ok, msg = pcall(c, -1)
      assert.is_false(ok)
      assert.matches("outside the curve's domain", msg)
    end)

    it("sorts on request and refuses unsorted input otherwise", function()
      local c = sw.curve.samples({ 2, 0, 1 }, { 4, 0, 2 }, { sort = true })
      assert.is.near(3, c(1.5), 1e-15)
      local ok, msg = pcall(sw.curve.samples, { 2, 0, 1 }, { 4, 0, 2 })
      assert.is_false(ok)
      assert.matches("x%[2%]", msg)
    end)

    it("names both indices of a repeated x, or averages on request", function()
      local ok, msg = pcall(sw.curve.samples, { 0, 1, 1, 2 }, { 0, 1, 3, 4 })
      assert.is_false(ok)
      assert.matches("x%[2%] and x%[3%]", msg)
      local c = sw.curve.samples({ 0, 1, 1, 2 }, { 0, 1, 3, 4 }, { duplicates = "mean" })
      assert.is.near(2, c(1), 1e-15)
      local xs = c:points()
      assert.are.equal(3, #xs)
    end)

    it("names the index of NaN and Inf values", function()
      local ok, msg = pcall(sw.curve.samples, { 0, 0 / 0, 2 }, { 0, 1, 2 })
      assert.is_false(ok); assert.matches("xs%[2%]", msg)
      ok, msg = pcall(sw.curve.samples, { 0, 1, 2 }, { 0, 1, math.huge })
      assert.is_false(ok); assert.matches("ys%[3%]", msg)
    end)

    it("needs two points and equal lengths", function()
      assert.has_error(function() sw.curve.samples({ 1 }, { 1 }) end)
      local ok, msg = pcall(sw.curve.samples, { 1, 2, 3 }, { 1, 2 })
      assert.is_false(ok); assert.matches("3 values but ys has 2", msg)
    end)

    it("gives the local slope and a curvature estimate", function()
      local xs, ys = {}, {}
      for k = 0, 20 do xs[#xs + 1] = k / 10; ys[#ys + 1] = (k / 10) ^ 2 end
      local c = sw.curve.samples(xs, ys)
      -- For y = x^2 the mean of adjacent chord slopes at a sample is exactly 2x.
      assert.is.near(2.0, c:deriv(1.0), 1e-12)
      assert.is.near(2.0, c:deriv2(1.0), 1e-9)
    end)
  end)

  describe("diode", function()
    it("defaults vt to kT/q at 300 K", function()
      local c = sw.curve.diode { is = 1e-14 }
      assert.is.near(sw.thermal_voltage(300), c:params().vt, 0)
    end)

    it("gives i(v) and v(i) that invert each other", function()
      local iv = sw.curve.diode { is = 2e-9, n = 1.8, rs = 0.2 }
      local vi = sw.curve.diode { is = 2e-9, n = 1.8, rs = 0.2, x = "i" }
      for _, v in ipairs { -0.5, 0, 0.2, 0.5, 0.7, 0.9, 1.5 } do
        local i = iv(v)
        assert.is.near(v, vi(i), 1e-12 * (1 + math.abs(v)))
      end
    end)

    it("stays finite for very large forward voltages (w + ln w = x branch)", function()
      local iv = sw.curve.diode { is = 1e-14, rs = 1 }
      local i = iv(100)
      assert.is_true(i > 90 and i < 100)
      -- analytic slope tends to 1/rs
      assert.is.near(1, iv:deriv(100), 1e-3)
    end)

    it("restricts v(i) to i > -is", function()
      local vi = sw.curve.diode { is = 1e-12, x = "i" }
      assert.has_error(function() vi(-1e-12) end)
      local lo = vi:domain()
      assert.are.equal(-1e-12, lo)
    end)

    it("has analytic derivatives that agree with finite differences", function()
      local iv = sw.curve.diode { is = 1e-12, n = 1.3, rs = 0.1 }
      local h = 1e-6
      for _, v in ipairs { 0.3, 0.6, 0.75 } do
        local fd = (iv(v + h) - iv(v - h)) / (2 * h)
        assert.is.near(fd, iv:deriv(v), 1e-6 * math.abs(fd))
        local fd2 = (iv:deriv(v + h) - iv:deriv(v - h)) / (2 * h)
        assert.is.near(fd2, iv:deriv2(v), 1e-5 * math.abs(fd2))
      end
    end)

    it("rejects bad parameters with their names", function()
      for _, case in ipairs {
        { { is = -1 }, "is must" }, { { is = 1e-12, n = 0 }, "n must" },
        { { is = 1e-12, rs = -1 }, "rs must" }, { { is = 1e-12, vt = 0 / 0 }, "vt" },
        { { n = 1 }, "is %(saturation" }, { { is = 1e-12, x = "q" }, "option x" },
        { { is = 1e-12, bogus = 1 }, "unknown option 'bogus'" },
      } do
        local ok, msg = pcall(sw.curve.diode, case[1])
        assert.is_false(ok)
        assert.matches(case[2], msg)
      end
    end)
  end)

  describe("power", function()
    it("is odd-symmetric with analytic derivatives", function()
      local c = sw.curve.power { k = 2, n = 3 }
      assert.is.near(16, c(2), 1e-12)
      assert.is.near(-16, c(-2), 1e-12)
      assert.is.near(24, c:deriv(2), 1e-12)
      assert.is.near(-24, c:deriv2(-2), 1e-12)
    end)
    it("reports an unbounded slope at 0 for n < 1", function()
      local c = sw.curve.power { k = 1, n = 0.5 }
      assert.has_error(function() c:deriv(0) end)
    end)
    it("takes a domain", function()
      local c = sw.curve.power { k = 1, n = 2, lo = 0, hi = 4 }
      local lo, hi = c:domain()
      assert.are.same({ 0, 4 }, { lo, hi })
      assert.has_error(function() c(5) end)
    end)
  end)

  describe("fn", function()
    it("calls a Lua function, with numerical derivatives", function()
      local c = sw.curve.fn(math.sin, { lo = 0, hi = 3 })
      assert.is.near(math.sin(1), c(1), 1e-15)
      assert.is.near(math.cos(1), c:deriv(1), 1e-8)
      assert.is.near(-math.sin(1), c:deriv2(1), 1e-5)
      -- one-sided difference at the domain's end
      assert.is.near(math.cos(0), c:deriv(0), 1e-6)
    end)

    it("passes an error raised inside the function through unchanged", function()
      local c = sw.curve.fn(function(x) error({ code = 42 }) end, { lo = 0, hi = 1 })
      local ok, e = pcall(c, 0.5)
      assert.is_false(ok)
      assert.are.equal(42, e.code)
    end)

    it("rejects nil and NaN results naming x", function()
      local c1 = sw.curve.fn(function() return nil end, { lo = 0, hi = 1 })
      local ok, msg = pcall(c1, 0.25)
      assert.is_false(ok); assert.matches("returned nil", msg)
      local c2 = sw.curve.fn(function() return 0 / 0 end, { lo = 0, hi = 1 })
      ok, msg = pcall(c2.deriv, c2, 0.5)
      assert.is_false(ok); assert.matches("nan", msg:lower())
    end)

    it("may call segwise re-entrantly", function()
      local inner = sw.curve.power { k = 1, n = 2 }
      local outer = sw.curve.fn(function(x) return inner(x) + 1 end, { lo = -1, hi = 1 })
      assert.is.near(1.25, outer(0.5), 1e-15)
    end)

    it("needs a function and a finite range", function()
      assert.has_error(function() sw.curve.fn(42, { lo = 0, hi = 1 }) end)
      assert.has_error(function() sw.curve.fn(math.sin, { lo = 1, hi = 0 }) end)
      assert.has_error(function() sw.curve.fn(math.sin, { lo = 0 }) end)
    end)
  end)

  it("errors after free()", function()
    local c = sw.curve.power { k = 1, n = 2 }
    c:free(); c:free() -- idempotent
    local ok, msg = pcall(c, 1)
    assert.is_false(ok); assert.matches("after free", msg)
  end)
end)
