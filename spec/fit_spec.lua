-- sw.fit: options, every scheme x criterion x error measure, constraints,
-- tolerance fits, the fit-info report and bad inputs.
local sw = require "segwise"

local function diode() return sw.curve.diode { is = 1e-12, n = 1.5, vt = 0.025 } end
local function power() return sw.curve.power { k = 2e-3, n = 3 } end
local function sampled()
  local xs, ys = {}, {}
  for i = 0, 300 do
    local v = 0.3 + 0.5 * i / 300
    xs[#xs + 1] = v
    ys[#ys + 1] = 1e-12 * (math.exp(v / 0.0375) - 1)
  end
  return sw.curve.samples(xs, ys)
end

local CURVES = {
  { name = "diode law", make = diode, lo = 0.3, hi = 0.8 },
  { name = "power law", make = power, lo = 0.1, hi = 2 },
  { name = "sampled data", make = sampled, lo = 0.3, hi = 0.8 },
}

local errmsg = require("helpers.files").errmsg

describe("segwise.fit", function()
  describe("defaults and the report", function()
    it("fits 4 continuous minimax segments on optimal knots over the curve's domain", function()
      local c = sw.curve.fn(math.exp, { lo = 0, hi = 1 })
      local m = sw.fit(c)
      local info = m:fit_info()
      assert.are.equal(4, m:nseg())
      assert.are.equal("minimax", info.criterion)
      assert.are.equal("optimal", info.knots)
      assert.are.equal("abs", info.error)
      assert.is_true(info.continuous)
      local kx = m:knots()
      assert.are.equal(0, kx[1]); assert.are.equal(1, kx[#kx])
    end)

    it("reports errors that match an independent recheck against the curve", function()
      local c = diode()
      local m = sw.fit(c, { lo = 0.3, hi = 0.8, segments = 5, criterion = "lsq" })
      local info, cmp = m:fit_info(), m:compare(c, { lo = 0.3, hi = 0.8, n = 4001 })
      assert.is.near(cmp.max_abs, info.max_abs, 1e-6 * cmp.max_abs)
      assert.is.near(cmp.max_rel, info.max_rel, 1e-6 * cmp.max_rel)
      assert.is.near(cmp.rms, info.rms, 1e-3 * cmp.rms)
      -- the worst point really has that error (tolerance: 1e-9 relative)
      assert.is.near(info.max_abs, math.abs(m(info.x_abs) - c(info.x_abs)), 1e-9 * info.max_abs)
      assert.are.equal(5, #info.per_segment)
      local worst = 0
      for k, s in ipairs(info.per_segment) do
        worst = math.max(worst, s.max_abs)
        assert.is_true(s.x >= s.lo and s.x <= s.hi, "segment " .. k)
        -- each segment's own worst point (tolerance 1e-9 relative)
        local seg = m:seg(k)
        assert.is.near(s.max_abs, math.abs(seg.slope * s.x + seg.intercept - c(s.x)),
          1e-9 * s.max_abs + 1e-18)
      end
      assert.is.near(info.max_abs, worst, 1e-6 * worst)
    end)

    it("leaves max_rel out when the curve reaches 0 and no rel_floor is given", function()
      local m = sw.fit(diode(), { lo = 0, hi = 0.7, segments = 3 })
      assert.is_nil(m:fit_info().max_rel)
      local m2 = sw.fit(diode(), { lo = 0, hi = 0.7, segments = 3, rel_floor = 1e-6 })
      assert.is_number(m2:fit_info().max_rel)
    end)
  end)

  describe("every scheme x criterion x error measure", function()
    local schemes = { "uniform", "geometric", "curvature", "optimal", "list" }
    for _, cv in ipairs(CURVES) do
      for _, crit in ipairs { "minimax", "lsq", "interp", "chord", "tangent" } do
        for _, scheme in ipairs(schemes) do
          for _, measure in ipairs { "abs", "rel" } do
           for _, cont in ipairs { true, false } do
            it(("%s, %s, knots %s, error %s, continuous = %s"):format(cv.name, crit, scheme,
              measure, tostring(cont)), function()
              local c = cv.make()
              local opts = { lo = cv.lo, hi = cv.hi, criterion = crit, error = measure,
                             continuous = cont }
              if scheme == "list" then
                opts.knots = { cv.lo, cv.lo + 0.6 * (cv.hi - cv.lo), cv.lo + 0.9 * (cv.hi - cv.lo),
                               cv.hi }
              else
                opts.knots = scheme
                opts.segments = crit == "tangent" and 1 or 3
              end
              if crit == "tangent" then opts.at = cv.lo + 0.8 * (cv.hi - cv.lo) end
              if crit == "tangent" and scheme ~= "uniform" then
                assert.matches("no meaning for criterion 'tangent'", errmsg(sw.fit, c, opts))
                return
              end
              local m = sw.fit(c, opts)
              local info = m:fit_info()
              assert.are.equal(crit == "tangent" and 1 or 3, m:nseg())
              assert.are.equal(crit, info.criterion)
              assert.is_true(info.max_abs >= 0 and info.max_rel >= 0)
              -- rechecked against the curve (tolerance 1e-6 relative)
              local cmp = m:compare(c, { lo = cv.lo, hi = cv.hi, n = 2001 })
              assert.is.near(cmp.max_abs, info.max_abs, 1e-6 * cmp.max_abs + 1e-300)
            end)
           end
          end
        end
      end
    end

    it("orders the schemes as theory says on a convex law (minimax, 6 segments)", function()
      local e = {}
      for _, s in ipairs { "uniform", "curvature", "optimal" } do
        e[s] = sw.fit(diode(), { lo = 0.3, hi = 0.8, segments = 6, knots = s }):fit_info().max_abs
      end
      assert.is_true(e.optimal <= e.curvature * (1 + 1e-9))
      assert.is_true(e.curvature < e.uniform)
    end)

    it("gives interpolation twice the minimax error on a convex law (optimal knots)", function()
      -- chord error = twice the shifted-chord error on each convex segment
      -- (Chebyshev equioscillation, common practice); tolerance 1 %
      local mm = sw.fit(diode(), { lo = 0.3, hi = 0.8, segments = 5 }):fit_info().max_abs
      local ip = sw.fit(diode(),
        { lo = 0.3, hi = 0.8, segments = 5, criterion = "interp", knots = "optimal" })
      assert.is.near(2, ip:fit_info().max_abs / mm, 0.02)
      for _, x in ipairs(ip:knots()) do
        assert.is.near(diode()(x), ip(x), 1e-12 + 1e-9 * diode()(x))
      end
    end)

    it("lets discontinuous minimax do no worse than continuous on fixed knots", function()
      for _, c in ipairs {
        diode(), sampled(), sw.curve.fn(function(x) return math.sin(8 * x) end, { lo = 0, hi = 1 })
      } do
        local lo, hi = c:domain()
        if lo < 0.3 then lo, hi = 0, 1 else lo, hi = 0.3, 0.8 end
        local opts = { lo = lo, hi = hi, knots = "uniform", segments = 4 }
        local cont = sw.fit(c, opts):fit_info().max_abs
        opts.continuous = false
        local disc = sw.fit(c, opts)
        assert.is_true(disc:fit_info().max_abs <= cont * (1 + 1e-9))
      end
    end)

    it("keeps the chord's ends on the curve and the tangent's slope at the operating "
      .. "point", function()
      local c = diode()
      local ch = sw.fit(c, { lo = 0.5, hi = 0.7, criterion = "chord" })
      assert.are.equal(1, ch:nseg())
      assert.is.near(c(0.5), ch(0.5), 1e-12 * c(0.5))
      assert.is.near(c(0.7), ch(0.7), 1e-12 * c(0.7))
      local tg = sw.fit(c, { lo = 0.5, hi = 0.7, criterion = "tangent", at = 0.6 })
      assert.is.near(c(0.6), tg(0.6), 1e-12 * c(0.6))
      assert.is.near(c:deriv(0.6), tg:slope(0.6), 1e-9 * c:deriv(0.6))
    end)
  end)

  describe("tol = (fewest segments)", function()
    for _, cv in ipairs(CURVES) do
      for _, measure in ipairs { "abs", "rel" } do
        for _, cont in ipairs { true, false } do
          it(("meets tol on the %s (%s, continuous = %s)"):format(cv.name, measure,
            tostring(cont)), function()
            local c = cv.make()
            -- the best single line under the same measure (a relative tol is below 100 %)
            local ref = sw.fit(c, { lo = cv.lo, hi = cv.hi, segments = 1, error = measure })
              :fit_info()
            local tol = (measure == "abs" and ref.max_abs or ref.max_rel) / 50
            local m = sw.fit(c, { lo = cv.lo, hi = cv.hi, tol = tol, error = measure,
                                  continuous = cont })
            local info = m:fit_info()
            local got = measure == "abs" and info.max_abs or info.max_rel
            assert.is_true(got <= tol * (1 + 1e-9))
            assert.are.equal(tol, info.tol)
            -- one segment fewer, at its best (optimal knots), misses tol
            if m:nseg() > 1 then
              local fewer = sw.fit(c, { lo = cv.lo, hi = cv.hi, segments = m:nseg() - 1,
                error = measure, continuous = cont }):fit_info()
              assert.is_true((measure == "abs" and fewer.max_abs or fewer.max_rel) > tol)
            end
          end)
        end
      end
    end

    it("searches the count for other schemes and criteria", function()
      local c = diode()
      for _, o in ipairs {
        { criterion = "lsq" }, { knots = "uniform" }, { criterion = "interp", knots = "curvature" },
      } do
        o.lo, o.hi, o.tol = 0.3, 0.8, 1e-4
        local m = sw.fit(c, o)
        assert.is_true(m:fit_info().max_abs <= 1e-4)
        o.tol = nil
        o.segments = m:nseg() - 1
        assert.is_true(sw.fit(c, o):fit_info().max_abs > 1e-4)
      end
    end)

    it("needs more segments for a tighter tolerance", function()
      local n1 = sw.fit(diode(), { lo = 0.3, hi = 0.8, tol = 1e-3 }):nseg()
      local n2 = sw.fit(diode(), { lo = 0.3, hi = 0.8, tol = 1e-5 }):nseg()
      assert.is_true(n2 > n1)
    end)

    -- a cap keeps a too-tight tolerance from building a huge model: below
    -- the needed count it is an error naming it; at it, the same model
    for _, knots in ipairs { "optimal", "uniform", "curvature" } do
      it("max_segments caps the search (knots = " .. knots .. ")", function()
        local o = { lo = 0.3, hi = 0.8, tol = 1e-4, knots = knots }
        local free = sw.fit(diode(), o)
        local n = free:nseg()
        assert.is_true(n > 2)
        o.max_segments = n
        local capped = sw.fit(diode(), o)
        -- the same knots; ordinates may differ in the last digits, as the
        -- search's history adds exchange samples
        assert.are.same(free:knots(), (capped:knots()))
        assert.near(free:fit_info().max_abs, capped:fit_info().max_abs, 1e-12)
        o.max_segments = n - 1
        local ok, msg = pcall(sw.fit, diode(), o)
        assert.is_false(ok)
        assert.matches("max_segments", msg)
      end)
    end

    -- a tiny rel_floor puts the level search's start near 1e300 times the
    -- answer; the search must still converge (it once stopped 60 decades off)
    it("relative fits converge whatever the rel_floor", function()
      local c = sw.curve.diode { is = 1e-12, n = 1.5, vt = 0.025 }
      local function rel(floor)
        return sw.fit(c, { lo = 0, hi = 0.7, segments = 4, knots = "uniform", error = "rel",
                           rel_floor = floor })
          :fit_info().max_rel
      end
      -- both floors sit far below every |i| but the one at 0 V, where the
      -- model must pass through 0 either way: the same fit
      local a, b = rel(1e-30), rel(1e-100)
      assert.is_true(a < 1, a)
      assert.near(a, b, 1e-6 * a)
    end)

    it("max_segments needs tol and a positive integer", function()
      assert.has_error(function()
        sw.fit(diode(), { lo = 0.3, hi = 0.8, segments = 3, max_segments = 5 })
      end,
        "segwise.fit: max_segments goes with tol (a cap on the fewest-segment search)")
      for _, bad in ipairs { 0, 2.5, -1, 0 / 0, 1e12 } do
        local ok, msg = pcall(sw.fit, diode(),
          { lo = 0.3, hi = 0.8, tol = 1e-3, max_segments = bad })
        assert.is_false(ok)
        assert.matches("max_segments", msg)
      end
    end)
  end)

  describe("constraints", function()
    local function bumpy()
      local xs, ys = {}, {}
      for i = 0, 200 do
        local x = i / 200
        xs[#xs + 1] = x
        ys[#ys + 1] = x * x + 0.05 * math.sin(40 * x)
      end
      return sw.curve.samples(xs, ys)
    end

    for _, crit in ipairs { "minimax", "lsq" } do
      for _, scheme in ipairs { "uniform", "optimal" } do
        it(("passes through given points (%s, %s knots)"):format(crit, scheme), function()
          local m = sw.fit(bumpy(), { criterion = crit, knots = scheme, segments = 4,
            through = { { 0, 0 }, { 0.55, 0.3 } } })
          assert.is.near(0, m(0), 1e-9)
          assert.is.near(0.3, m(0.55), 1e-9)
        end)

        it(("holds the end slopes (%s, %s knots)"):format(crit, scheme), function()
          local m = sw.fit(bumpy(),
            { criterion = crit, knots = scheme, segments = 4, slope_first = 0 })
          assert.is.near(0, m:seg(1).slope, 1e-9)
          local m2 = sw.fit(bumpy(),
            { criterion = crit, knots = scheme, segments = 4, slope_last = 2 })
          assert.is.near(2, m2:seg(4).slope, 1e-9)
        end)

        it(("keeps the model monotone (%s, %s knots)"):format(crit, scheme), function()
          local m = sw.fit(bumpy(),
            { criterion = crit, knots = scheme, segments = 8, monotone = true })
          for k = 1, m:nseg() do assert.is_true(m:seg(k).slope >= -1e-9, "segment " .. k) end
        end)
      end
    end

    it("holds slope_first and slope_last together on fixed knots", function()
      local m = sw.fit(bumpy(),
        { knots = "uniform", segments = 3, slope_first = 0.5, slope_last = 1.5 })
      assert.is.near(0.5, m:seg(1).slope, 1e-9)
      assert.is.near(1.5, m:seg(3).slope, 1e-9)
    end)

    it("holds an end slope in discontinuous optimal fits, both ends only on fixed knots", function()
      local m = sw.fit(bumpy(), { continuous = false, segments = 4, slope_last = 2 })
      assert.is.near(2, m:seg(4).slope, 1e-9)
      local m2 = sw.fit(bumpy(), { continuous = false, segments = 4, slope_first = 0 })
      assert.is.near(0, m2:seg(1).slope, 1e-9)
      assert.matches("slope_first and slope_last together are not supported yet",
        errmsg(sw.fit, bumpy(),
          { continuous = false, segments = 4, slope_first = 0, slope_last = 2 }))
      local m3 = sw.fit(bumpy(), { continuous = false, knots = "uniform", segments = 4,
        slope_first = 0, slope_last = 2 })
      assert.is.near(0, m3:seg(1).slope, 1e-9)
      assert.is.near(2, m3:seg(4).slope, 1e-9)
    end)

    it("refuses a through point farther than tol from the curve", function()
      assert.matches("through%[1%] = %(0.5, 3%) lies farther than tol = 0.1 from the curve",
        errmsg(sw.fit, bumpy(), { tol = 0.1, through = { { 0.5, 3 } } }))
    end)

    it("meets a tolerance under a through point", function()
      local m = sw.fit(bumpy(), { tol = 0.06, through = { { 0, 0 } } })
      assert.is.near(0, m(0), 1e-9)
      assert.is_true(m:fit_info().max_abs <= 0.06 * (1 + 1e-9))
    end)

    it("reports combinations that cannot be met", function()
      -- one segment with slope 0 cannot pass through (0, 0) and (1, 1)
      for _, crit in ipairs { "minimax", "lsq" } do
        local msg = errmsg(sw.fit, bumpy(), { criterion = crit, segments = 1, knots = "uniform",
          slope_first = 0, through = { { 0, 0 }, { 1, 1 } } })
        assert.matches("segwise.fit: .*cannot be met", msg)
      end
      assert.matches("monotone with continuous = false is not supported yet",
        errmsg(sw.fit, bumpy(), { monotone = true, continuous = false }))
      assert.matches("apply to criterion 'minimax' or 'lsq'",
        errmsg(sw.fit, bumpy(), { criterion = "interp", through = { { 0, 0 } } }))
    end)
  end)

  describe("callbacks", function()
    it("stops at the first failing call of a Lua function and raises its error", function()
      local calls = 0
      local c = sw.curve.fn(function(x)
        calls = calls + 1
        if x > 0.5 then error("bad sensor at " .. x) end
        return x * x
      end, { lo = 0, hi = 1 })
      local msg = errmsg(sw.fit, c, { segments = 2 })
      assert.matches("bad sensor", msg)
      local before = calls
      assert.is_true(before < 5000)  -- no long run after the failure
    end)

    it("rejects a function that returns a non-number", function()
      local c = sw.curve.fn(function(x) return x > 0.5 and "x" or x end, { lo = 0, hi = 1 })
      assert.has_error(function() sw.fit(c, { segments = 2 }) end)
    end)
  end)

  describe("bad inputs", function()
    local c = sampled()
    local cases = {
      { { lo = 0.7, hi = 0.4 }, "lo %(0.7%) must be below hi %(0.4%)" },
      { { lo = 0.5, hi = 0.5 }, "lo %(0.5%) must be below hi" },
      { { lo = 0.1, hi = 0.5 }, "outside the curve's domain" },
      { { segments = 0 }, "segments %(0%) must be an integer of at least 1" },
      { { segments = 2.5 }, "segments %(2.5%) must be an integer" },
      { { tol = 0 }, "tol %(0%) must be positive" },
      { { tol = -1 }, "tol %(%-1%) must be positive" },
      { { segments = 3, tol = 1 }, "give segments or tol, not both" },
      { { segments = 400 }, "segments %(400%) needs at least 401 samples" },
      { { knots = { 0.3, 0.9 } }, "knots%[2%] = 0.9 is outside the range" },
      { { knots = { 0.3, 0.6, 0.5, 0.8 } }, "knots must be strictly increasing %(knots%[3%]" },
      { { knots = "random" }, "knots must be one of" },
      { { segmnets = 3 }, "unknown option 'segmnets'" },
      { { criterion = "best" }, "option criterion must be one of" },
      { { continuous = "yes" }, "option continuous must be a boolean" },
      { { criterion = "tangent" }, "criterion 'tangent' needs at" },
      { { criterion = "tangent", at = 2 }, "at %(2%) must lie in the range" },
      { { knots = "geometric", lo = 0.3, hi = 0.8, segments = 2 }, nil },
      { { through = { { 0.5 } } }, "through%[1%] must be a pair" },
      { { through = { { 5, 0 } } }, "through%[1%] %(x = 5%) is outside the range" },
      { { rel_floor = -1 }, "rel_floor %(%-1%) must be positive" },
      { { tol = 1, knots = { 0.3, 0.8 } }, "tol and an explicit knot list exclude each other" },
    }
    for i, case in ipairs(cases) do
      it(("case %d: %s"):format(i, case[2] or "runs"), function()
        if case[2] == nil then
          assert.are.equal(2, sw.fit(c, case[1]):nseg())
          return
        end
        local msg = errmsg(sw.fit, c, case[1])
        assert.matches("segwise.fit: ", msg)
        assert.matches(case[2], msg)
      end)
    end

    it("needs rel_floor for relative error on a curve that reaches 0", function()
      assert.matches("relative error is undefined where the curve is 0 %(near x = 0%); "
        .. "give rel_floor",
        errmsg(sw.fit, diode(), { lo = 0, hi = 0.7, error = "rel" }))
      local m = sw.fit(diode(), { lo = 0, hi = 0.7, error = "rel", rel_floor = 1e-6 })
      assert.is_number(m:fit_info().max_rel)
    end)

    it("needs a range for an unbounded law", function()
      assert.matches("unbounded; give lo and hi", errmsg(sw.fit, power(), {}))
    end)

    it("rejects geometric knots on a range that holds 0 unless an offset moves it", function()
      assert.matches("geometric knots need a range that does not contain the offset 0",
        errmsg(sw.fit, power(), { lo = -1, hi = 1, knots = "geometric" }))
      local m = sw.fit(power(),
        { lo = -1, hi = 1, knots = "geometric", offset = -1.5, segments = 3 })
      local kx = m:knots()
      -- spacing grows by a constant ratio from the offset: (x - offset) geometric
      local r1, r2 = (kx[2] + 1.5) / (kx[1] + 1.5), (kx[3] + 1.5) / (kx[2] + 1.5)
      assert.is.near(r1, r2, 1e-12)
      assert.is.near(5, r1 ^ 3, 1e-12)  -- (1 + 1.5) / (-1 + 1.5) = 5
      assert.matches("offset applies to knots = \"geometric\" only",
        errmsg(sw.fit, power(), { lo = 0, hi = 1, offset = 2 }))
    end)

    it("rejects a curve that is not a curve", function()
      assert.matches("curve must be a segwise curve", errmsg(sw.fit, {}, {}))
    end)
  end)
end)

describe("segwise.fit knots as an array", function()
  it("takes a segwise array of knots like a table", function()
    local sw = require "segwise"
    -- interpolation of x^2 at 0, 0.5, 1: the chord at 0.25 is 0.125 by hand
    local m = sw.fit(sw.curve.power { k = 1, n = 2 },
      { lo = 0, hi = 1, knots = sw.array { 0, 0.5, 1 }, criterion = "interp" })
    assert.are.equal(2, m:nseg())
    assert.is.near(0.125, m(0.25), 1e-15)
  end)
end)
