-- Tolerance fits under max_segments: a tol the cap cannot reach is refused
-- with the limit hit and the error no model of the cap's count gets below,
-- and a tol the cap can reach is met at the cap.  Closed form used: x^2 on
-- [0, L] with k segments has best error E_k = L^2 / (8 k^2), continuous or
-- not (each segment of width L/k has best-line error (L/k)^2 / 8: the
-- Chebyshev line of a parabola, equioscillation; see count_optimal_spec).
local sw = require "segwise"

local parabola = sw.curve.power { k = 1, n = 2 }
local function E(L, k) return L ^ 2 / (8 * k ^ 2) end

-- The message of a failing sw.fit, or an error when it succeeds.
local function refusal(curve, opts)
  local ok, msg = pcall(sw.fit, curve, opts)
  assert.is_false(ok, "the fit succeeded")
  return tostring(msg)
end

-- The floor a refusal states: "no model of n segments gets its error below F".
local function stated_floor(msg, n)
  local f = msg:match("no model of " .. n .. " segments gets its [%a ]-below ([%d.e+-]+)%)")
  assert.is_not_nil(f, "no floor in: " .. msg)
  return tonumber(f)
end

local function wiggle()
  return sw.curve.fn(function(x) return x * math.sin(5 * x) end, { lo = 0, hi = 4 })
end

describe("segwise.fit tol with max_segments", function()
  describe("a tol beyond the cap", function()
    for _, continuous in ipairs { true, false } do
      for _, knots in ipairs { "optimal", "uniform", "curvature" } do
        it(("x^2 on [0, 1], %s knots, continuous = %s: says the limit and the floor")
          :format(knots, tostring(continuous)), function()
          local msg = refusal(parabola, { lo = 0, hi = 1, tol = 1e-4, max_segments = 20,
            knots = knots, continuous = continuous })
          assert.matches("segwise.fit: tol = 0.0001 needs more than max_segments = 20 segments",
            msg, 1, true)
          local f = stated_floor(msg, 20)
          -- a floor: never above the closed form, and within 5 % of it (dense samples)
          assert.is_true(f <= E(1, 20), ("floor %g above E_20 = %g"):format(f, E(1, 20)))
          assert.is.near(E(1, 20), f, 0.05 * E(1, 20))
        end)
      end
    end

    it("the floor is below what a fit of the cap's count reaches (a function curve)", function()
      for _, n in ipairs { 5, 20, 60 } do
        local best = sw.fit(wiggle(), { segments = n, continuous = false }):fit_info().max_abs
        local f = stated_floor(refusal(wiggle(), { tol = 1e-9, max_segments = n }), n)
        assert.is_true(f <= best, ("n = %d: floor %g above a model's %g"):format(n, f, best))
        assert.is.near(best, f, 0.1 * best) -- close: tolerance 10 % of the fit's error
      end
    end)

    it("a sampled curve of 10^5 points", function()
      local n = 100000
      local xs, ys = sw.array(n), sw.array(n)
      for i = 1, n do
        local x = (i - 1) / (n - 1) * 0.8
        xs[i], ys[i] = x, 1e-14 * (math.exp(x / 0.02585) - 1)
      end
      local c = sw.curve.samples(xs, ys)
      local best = sw.fit(c, { segments = 30, continuous = false }):fit_info().max_abs
      local f = stated_floor(refusal(c, { tol = 1e-12, max_segments = 30 }), 30)
      assert.is_true(f <= best, ("floor %g above a model's %g"):format(f, best))
      assert.is.near(best, f, 0.05 * best) -- tolerance 5 % of the fit's error
    end)

    it("relative error says so", function()
      local d = sw.curve.diode { is = 1e-14, n = 1, x = "v" }
      local msg = refusal(d, { lo = 0.3, hi = 0.8, tol = 1e-9, error = "rel", max_segments = 8 })
      assert.matches("needs more than max_segments = 8 segments", msg, 1, true)
      assert.matches("gets its relative error below", msg, 1, true)
    end)

    it("a fixed scheme the cap cannot reach while other knots can: names the scheme", function()
      -- x^3 on [0, 2]: 20 uniform segments reach 7.3e-3, 20 optimal ones 3.4e-3
      local cube = sw.curve.power { k = 1, n = 3 }
      local msg = refusal(cube, { lo = 0, hi = 2, tol = 5e-3, max_segments = 20,
        knots = "uniform" })
      assert.matches("tol = 0.005 needs more than max_segments = 20 segments with uniform knots",
        msg, 1, true)
      assert.matches('knots = "optimal" may need fewer', msg, 1, true)
      local f = tonumber(msg:match("these knots cannot get the error below ([%d.e+-]+)"))
      local best = sw.fit(cube, { lo = 0, hi = 2, segments = 20, knots = "uniform" })
        :fit_info().max_abs
      assert.is_true(f <= best, ("floor %g above the uniform fit's %g"):format(f, best))
      assert.is.near(best, f, 0.03 * best) -- tolerance 3 % of the fit's error
      local ok = sw.fit(cube, { lo = 0, hi = 2, tol = 5e-3, max_segments = 20 })
      assert.is_true(ok:nseg() <= 20)
    end)
  end)

  describe("a tol the cap reaches", function()
    -- the greedy tube may find one segment more than the fewest (its knots
    -- sit on samples); the cap must not refuse before the count is settled
    for _, k in ipairs { 3, 5, 8, 12 } do
      it(("x^2 on [0, 3], 0.1 %% above E_%d, max_segments = %d: %d segments")
        :format(k, k, k), function()
        local tol = E(3, k) * (1 + 1e-3)
        local m = sw.fit(parabola, { lo = 0, hi = 3, tol = tol, max_segments = k })
        assert.are.equal(k, m:nseg())
        assert.is_true(m:fit_info().max_abs <= tol)
      end)
    end

    it("just below E_k the cap of k is refused, just above it met", function()
      local k = 20
      local below = refusal(parabola, { lo = 0, hi = 1, tol = E(1, k) * 0.99, max_segments = k })
      assert.matches("needs more than max_segments = 20", below, 1, true)
      local m = sw.fit(parabola, { lo = 0, hi = 1, tol = E(1, k) * 1.01, max_segments = k })
      assert.is_true(m:nseg() <= k)
      assert.is_true(m:fit_info().max_abs <= E(1, k) * 1.01)
    end)

    it("uniform knots: the count search gives the fewest uniform segments", function()
      -- x^2: uniform knots are optimal, so the fewest is the smallest k with E_k <= tol
      for _, tol in ipairs { 1e-2, 1e-3, 3e-4 } do
        local want = math.ceil(math.sqrt(1 / (8 * tol)))
        local m = sw.fit(parabola, { lo = 0, hi = 1, tol = tol, knots = "uniform",
          max_segments = 64 })
        assert.are.equal(want, m:nseg())
      end
    end)
  end)
end)
