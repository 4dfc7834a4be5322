-- Checks of the foundation against results from outside the project.  Each
-- check names its source.  (Fit and circuit references live in
-- reference_fit_spec.lua and reference_net_spec.lua.)
local sw = require "segwise"

describe("segwise reference checks", function()
  it("kT/q at 300 K from the CODATA 2018 exact constants", function()
    -- Source: CODATA 2018 (exact since the 2019 SI redefinition):
    -- k = 1.380649e-23 J/K, q = 1.602176634e-19 C.
    local expected = 1.380649e-23 * 300 / 1.602176634e-19
    assert.is.near(expected, sw.thermal_voltage(300), 1e-18)
    -- Common practice: "about 25.85 mV at 300 K".
    assert.is.near(0.02585, sw.thermal_voltage(300), 5e-6)
  end)

  it("Lambert W diode law agrees with an independent root finder", function()
    -- Source: Banwell and Jayakumar, Electronics Letters 36 (2000): the
    -- diode with series resistance i(v) = (n Vt / Rs) W(...) - Is solves the
    -- implicit Shockley equation i = Is (exp((v - i Rs)/(n Vt)) - 1).  The
    -- reference here is plain bisection on that implicit equation.
    local is, n, rs = 3e-12, 1.6, 2.5
    local vt = sw.thermal_voltage(300)
    local c = sw.curve.diode { is = is, n = n, rs = rs }
    local function bisect(v)
      local lo, hi = -is, math.max(v / rs, 0) + 1
      for _ = 1, 200 do
        local mid = 0.5 * (lo + hi)
        local g = mid - is * (math.exp((v - mid * rs) / (n * vt)) - 1)
        if g > 0 then hi = mid else lo = mid end
      end
      return 0.5 * (lo + hi)
    end
    for _, v in ipairs { -2, -0.1, 0.05, 0.3, 0.55, 0.7, 0.9, 1.2, 3, 10 } do
      local ref = bisect(v)
      assert.is.near(ref, c(v), 1e-12 * math.abs(ref) + 1e-24)
    end
  end)

  it("the diode law keeps the implicit equation far up the resistive branch", function()
    -- Same implicit Shockley equation, written for v: v = i Rs + n Vt ln(1 + i/Is),
    -- which has no cancellation at large i.  A fuzzer find: at 9e20 V the
    -- Newton polish once cancelled v - i Rs to noise and returned i = 0.
    local is, n, rs = 7.3e-13, 1.72, 0.72
    local nvt = n * sw.thermal_voltage(300)
    local c = sw.curve.diode { is = is, n = n, rs = rs }
    local last = -math.huge
    for e = 0, 21, 0.5 do
      local v = 10 ^ e
      local i = c(v)
      assert.is_true(i > last, "not increasing at v = " .. v)
      last = i
      assert.is.near(v, i * rs + nvt * math.log(1 + i / is), 1e-12 * v)
    end
  end)

  it("broken-line interpolation error of x^2 is h^2/8 max|f''|, attained", function()
    -- Source: de Boor, A Practical Guide to Splines, the error bound of
    -- broken-line interpolation ||f - I f|| <= h^2/8 ||f''||; for f = x^2
    -- (f'' = 2) the bound h^2/4 is attained at every interval's midpoint.
    -- (The power law is odd-symmetric, so stay on x >= 0 where it is x^2.)
    local f = sw.curve.power { k = 1, n = 2 }
    for _, nseg in ipairs { 1, 4, 10 } do
      local xs, ys = {}, {}
      local h = 2 / nseg
      for k = 0, nseg do xs[k + 1] = k * h; ys[k + 1] = xs[k + 1] ^ 2 end
      local m = sw.pwl { x = xs, y = ys }
      local r = m:compare(f, { lo = 0, hi = 2 })
      assert.is.near(h * h / 4, r.max_abs, 1e-13)
    end
  end)

  it("broken-line interpolation of a diode law stays inside h^2/8 max|f''|", function()
    -- Source: de Boor (as above), applied to the exponential law.
    local c = sw.curve.diode { is = 1e-12, n = 1 }
    local lo, hi, nseg = 0.4, 0.6, 8
    local xs, ys = {}, {}
    for k = 0, nseg do xs[k + 1] = lo + (hi - lo) * k / nseg; ys[k + 1] = c(xs[k + 1]) end
    local m = sw.pwl { x = xs, y = ys }
    local h = (hi - lo) / nseg
    local bound = h * h / 8 * c:deriv2(hi) -- f'' is increasing: its max is at hi
    local r = m:compare(c, { lo = lo, hi = hi })
    assert.is_true(r.max_abs <= bound)
    assert.is_true(r.max_abs >= 0.5 * bound) -- and not vacuously small
  end)

  it("the canonical form round-trips (Chua and Kang)", function()
    -- Source: Chua and Kang, "Section-wise piecewise-linear functions:
    -- canonical representation, properties, and applications", Proc. IEEE
    -- 65 (1977): y = a + b x + sum c_i |x - beta_i| with c_i half the slope
    -- change at beta_i and b the mean of the end slopes.
    local seed = 12345
    local function rand()
      seed = (seed * 1103515245 + 12345) % 2147483648; return seed / 2147483648
    end
    for _ = 1, 20 do
      local xs, ys, x = {}, {}, -3
      for k = 1, 2 + math.floor(rand() * 8) do
        x = x + 0.1 + rand(); xs[k] = x; ys[k] = rand() * 10 - 5
      end
      local m = sw.pwl { x = xs, y = ys }
      local a, b, c, beta = m:canonical()
      for k = 2, #xs - 1 do
        local s1, s2 = m:seg(k - 1).slope, m:seg(k).slope
        assert.is.near((s2 - s1) / 2, c[k - 1], 1e-12)
      end
      for t = xs[1] - 1, xs[#xs] + 1, 0.37 do
        local y = a + b * t
        for i = 1, #c do y = y + c[i] * math.abs(t - beta[i]) end
        assert.is.near(m(t), y, 1e-9)
      end
    end
  end)

  it("the chord of a convex curve over-estimates it everywhere", function()
    -- Source: definition of convexity (any calculus text); the exponential
    -- diode law is convex for x = "v".
    local c = sw.curve.diode { is = 1e-14 }
    local m = sw.pwl { x = { 0.5, 0.7 }, y = { c(0.5), c(0.7) } }
    for v = 0.5, 0.7, 0.01 do assert.is_true(m(v) >= c(v) - 1e-18) end
  end)
end)
