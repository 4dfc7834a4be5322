-- Fitting checked against results from outside the project: closed forms of
-- approximation theory, de Boor's asymptotic error, least-squares normal
-- equations solved here independently, and brute-force optimality.
local sw = require "segwise"

-- Shockley law without series resistance: i = is*(exp(v/vt) - 1).
local IS, VT = 1e-12, 0.025
local function diode() return sw.curve.diode { is = IS, n = 1, vt = VT } end
local function expf(v) return IS * math.exp(v / VT) end

-- Sign changes among the extremes of e(x) = m(x) - f(x) that reach
-- (1 - slack)*E in size, on a fine grid.
local function alternations(m, f, lo, hi, E, slack)
  local n, signs = 20000, {}
  local prev, pprev
  local function err(x) return m(x) - f(x) end
  for i = 0, n do
    local x = lo + (hi - lo) * i / n
    local e = err(x)
    if math.abs(e) >= (1 - slack) * E then
      local s = e > 0 and 1 or -1
      if signs[#signs] ~= s then signs[#signs + 1] = s end
    end
    pprev, prev = prev, e
  end
  return #signs
end

-- Best error of one segment [x, x + h] of the exponential: the chord slope m,
-- the parallel tangent at xi (f'(xi) = m), error half the gap
-- (Chebyshev equioscillation, common practice).
local function seg_error(x, h)
  local m = (expf(x + h) - expf(x)) / h
  local xi = VT * math.log(m * VT / IS)
  return (expf(x) + m * (xi - x) - expf(xi)) / 2
end

-- Equal-error construction: can n segments of error <= E cover [a, b]?
local function covers(E, n, a, b)
  local x = a
  for _ = 1, n do
    if seg_error(x, b - x) <= E then return true end
    local lo, hi = 0, b - x
    for _ = 1, 80 do
      local mid = (lo + hi) / 2
      if seg_error(x, mid) <= E then lo = mid else hi = mid end
    end
    x = x + lo
  end
  return false
end

local function optimal_error(n, a, b)
  local lo, hi = 0, 1
  for _ = 1, 100 do
    local mid = (lo + hi) / 2
    if covers(mid, n, a, b) then hi = mid else lo = mid end
  end
  return hi
end

describe("segwise.fit reference values", function()
  describe("best uniform line (Chebyshev equioscillation)", function()
    -- The best uniform line to sqrt(x) on [0, 1] is x + 1/8 with error 1/8:
    -- equioscillation at 0, 1/4 and 1 (classical textbook example, from memory).
    it("is x + 1/8 with error 1/8 for the power law x^0.5 (closed form path)", function()
      local m = sw.fit(sw.curve.power { k = 1, n = 0.5 }, { lo = 0, hi = 1, segments = 1 })
      local s = m:seg(1)
      assert.is.near(1, s.slope, 1e-9)
      assert.is.near(0.125, s.intercept, 1e-9)
      assert.is.near(0.125, m:fit_info().max_abs, 1e-9)
    end)

    it("is x + 1/8 for a Lua function with numeric derivatives", function()
      local m = sw.fit(sw.curve.fn(math.sqrt, { lo = 0, hi = 1 }),
        { segments = 1, knots = "uniform" })
      assert.is.near(1, m:seg(1).slope, 1e-6)
      assert.is.near(0.125, m:seg(1).intercept, 1e-6)
    end)

    it("is x + 1/8 within the sampling error for 2001 samples of sqrt(x)", function()
      local xs, ys = {}, {}
      for i = 0, 2000 do xs[#xs + 1] = (i / 2000) ^ 2; ys[#ys + 1] = i / 2000 end
      local m = sw.fit(sw.curve.samples(xs, ys), { segments = 1 })
      assert.is.near(1, m:seg(1).slope, 1e-3)
      assert.is.near(0.125, m:seg(1).intercept, 1e-3)
      -- three alternation points: 0, 1/4, 1
      assert.are.equal(3, alternations(m, math.sqrt, 0, 1, m:fit_info().max_abs, 1e-3))
    end)
  end)

  describe("optimal knots on a convex law (equal-error construction)", function()
    -- For a strictly convex f the best continuous PWL with n free knots has
    -- every segment at the same error, each equioscillating at its two ends
    -- and its tangent point: 2n + 1 alternation points (approximation
    -- theory, from memory; the exact value is built here independently).
    for _, n in ipairs { 3, 8 } do
      it(("matches the independent equal-error optimum for %d segments"):format(n), function()
        local E = optimal_error(n, 0.3, 0.7)
        local m = sw.fit(diode(), { lo = 0.3, hi = 0.7, segments = n })
        local info = m:fit_info()
        assert.is.near(E, info.max_abs, 5e-3 * E)  -- grid-placed knots: within 0.5 %
        assert.is_true(info.max_abs >= E * (1 - 1e-9)) -- nothing beats the optimum
        assert.are.equal(2 * n + 1, alternations(m,
          function(v) return IS * (math.exp(v / VT) - 1) end,
          0.3, 0.7, info.max_abs, 0.02))
      end)
    end

    it("is no better with continuous = false on a convex law (same optimum)", function()
      local E = optimal_error(4, 0.3, 0.7)
      local m = sw.fit(diode(), { lo = 0.3, hi = 0.7, segments = 4, continuous = false })
      assert.is.near(E, m:fit_info().max_abs, 5e-3 * E)
    end)

    -- de Boor, A Practical Guide to Splines: free-knot PWL error
    -- E_n ~ (int sqrt|f''| dx)^2 / (16 n^2) for large n.
    it("approaches de Boor's asymptotic error for the diode law", function()
      local I = 2 * math.sqrt(IS) * (math.exp(0.7 / (2 * VT)) - math.exp(0.3 / (2 * VT)))
      local m = sw.fit(diode(), { lo = 0.3, hi = 0.7, segments = 32 })
      assert.is.near(1, m:fit_info().max_abs / (I * I / (16 * 32 * 32)), 0.03)
    end)

    it("approaches de Boor's asymptotic error for the power law x^1.5", function()
      -- f'' = 0.75 x^-1/2, int_0^1 sqrt(f'') = sqrt(0.75) * 4/3
      local I = math.sqrt(0.75) * 4 / 3
      local m = sw.fit(sw.curve.power { k = 1, n = 1.5 }, { lo = 0, hi = 1, segments = 32 })
      assert.is.near(1, m:fit_info().max_abs / (I * I / (16 * 32 * 32)), 0.02)
    end)

    it("gives the fewest segments of the equal-error construction for a tolerance", function()
      for _, tol in ipairs { 1e-3, 1e-4 } do
        local nstar = 1
        while not covers(tol, nstar, 0.3, 0.7) do nstar = nstar + 1 end
        local m = sw.fit(diode(), { lo = 0.3, hi = 0.7, tol = tol })
        assert.are.equal(nstar, m:nseg())
        assert.is_true(m:compare(diode(), { lo = 0.3, hi = 0.7 }).max_abs <= tol * (1 + 1e-9))
      end
    end)
  end)

  describe("least squares (normal equations solved here)", function()
    local function noisy(n, seed)
      local xs, ys, s = {}, {}, seed
      for i = 1, n do
        s = (1103515245 * s + 12345) % 2147483648  -- LCG, seeded
        xs[i] = i / n
        ys[i] = math.exp(xs[i]) + 0.05 * (s / 2147483648 - 0.5)
      end
      return xs, ys
    end

    it("matches the closed-form least-squares line of each segment", function()
      local xs, ys = noisy(60, 7)
      local m = sw.fit(sw.curve.samples(xs, ys), {
        criterion = "lsq", continuous = false, knots = { xs[1], 0.5, xs[#xs] } })
      -- closed form: slope = Sxy / Sxx about the means (Gauss normal equations)
      for k, range in ipairs { { xs[1], 0.5 }, { 0.5, xs[#xs] + 1 } } do
        local n, sx, sy = 0, 0, 0
        for i = 1, #xs do
          if xs[i] >= range[1] and xs[i] < range[2] then
            n = n + 1; sx = sx + xs[i]; sy = sy + ys[i]
          end
        end
        local mx, my, sxx, sxy = sx / n, sy / n, 0, 0
        for i = 1, #xs do
          if xs[i] >= range[1] and xs[i] < range[2] then
            sxx = sxx + (xs[i] - mx) ^ 2; sxy = sxy + (xs[i] - mx) * (ys[i] - my)
          end
        end
        local b = sxy / sxx
        local seg = m:seg(k)
        assert.is.near(b, seg.slope, 1e-9)
        assert.is.near(my - b * mx, seg.intercept, 1e-9)
      end
    end)

    it("matches the hat-basis normal equations for a continuous fit", function()
      local xs, ys = noisy(50, 11)
      local K = { xs[1], 0.3, 0.7, xs[#xs] }
      local m = sw.fit(sw.curve.samples(xs, ys), { criterion = "lsq", knots = K })
      -- build and solve the 4x4 normal equations by Gaussian elimination
      local A, r = {}, {}
      for i = 1, 4 do A[i] = { 0, 0, 0, 0 }; r[i] = 0 end
      for i = 1, #xs do
        local j = xs[i] < 0.3 and 1 or (xs[i] < 0.7 and 2 or 3)
        local t = (xs[i] - K[j]) / (K[j + 1] - K[j])
        local phi = { [j] = 1 - t, [j + 1] = t }
        for p, vp in pairs(phi) do
          r[p] = r[p] + vp * ys[i]
          for q, vq in pairs(phi) do A[p][q] = A[p][q] + vp * vq end
        end
      end
      for c = 1, 4 do
        for row = c + 1, 4 do
          local f = A[row][c] / A[c][c]
          for k = c, 4 do A[row][k] = A[row][k] - f * A[c][k] end
          r[row] = r[row] - f * r[c]
        end
      end
      local c = {}
      for row = 4, 1, -1 do
        local s = r[row]
        for k = row + 1, 4 do s = s - A[row][k] * c[k] end
        c[row] = s / A[row][row]
      end
      local _, ky = m:knots()
      for i = 1, 4 do assert.is.near(c[i], ky[i], 1e-9) end
    end)

    -- The L2-best line to x^2 on [0, 1] is x - 1/6 (orthogonal projection
    -- onto {1, x}; Legendre polynomials shifted to [0, 1], common practice).
    it("projects a law in L2: x^2 on [0, 1] gives x - 1/6", function()
      local m = sw.fit(sw.curve.power { k = 1, n = 2 },
        { lo = 0, hi = 1, criterion = "lsq", segments = 1 })
      assert.is.near(1, m:seg(1).slope, 1e-5)
      assert.is.near(-1 / 6, m:seg(1).intercept, 1e-5)
    end)
  end)

  describe("noisy data (seeded) recovers a known PWL", function()
    -- truth: knots 0, 0.3, 0.7, 1 with values 0, 0.6, 0.2, 1.0
    local truth = sw.pwl { x = { 0, 0.3, 0.7, 1 }, y = { 0, 0.6, 0.2, 1.0 } }
    local noise = 0.01
    local function data(seed)
      local xs, ys, s = {}, {}, seed
      for i = 0, 400 do
        s = (1103515245 * s + 12345) % 2147483648
        xs[#xs + 1] = i / 400
        ys[#ys + 1] = truth(i / 400) + noise * (2 * s / 2147483648 - 1)
      end
      return sw.curve.samples(xs, ys)
    end

    for _, crit in ipairs { "lsq", "minimax" } do
      it(("finds the knots and stays within the noise (%s, optimal knots)"):format(crit), function()
        local m = sw.fit(data(42), { criterion = crit, segments = 3 })
        local kx = m:knots()
        assert.is.near(0.3, kx[2], 0.02)
        assert.is.near(0.7, kx[3], 0.02)
        for i = 0, 200 do
          local x = i / 200
          assert.is_true(math.abs(m(x) - truth(x)) <= 2 * noise)
        end
      end)
    end

    it("needs exactly the true segment count for tol = noise level", function()
      local m = sw.fit(data(3), { tol = 1.001 * noise })
      assert.are.equal(3, m:nseg())
    end)
  end)

  describe("fewest segments: brute force on small cases", function()
    -- Minimax error of one line on points i..j: the largest three-point
    -- Chebyshev error over every triple (a line's best error on points is
    -- attained on a 3-point reference; common practice).
    local function line_error(xs, ys, i, j)
      local e = 0
      for a = i, j do
        for b = a + 1, j do
          for c = b + 1, j do
            local chord = ys[a] + (ys[c] - ys[a]) * (xs[b] - xs[a]) / (xs[c] - xs[a])
            e = math.max(e, math.abs(chord - ys[b]) / 2)
          end
        end
      end
      return e
    end

    -- Can k segments (knots on samples, neighbours sharing their end sample)
    -- cover the points within tol?  Exhaustive over knot choices.
    local function feasible(xs, ys, k, tol)
      local n = #xs
      local function rec(start, left)
        if left == 1 then return line_error(xs, ys, start, n) <= tol end
        for stop = start + 1, n - 1 do
          if line_error(xs, ys, start, stop) <= tol and rec(stop, left - 1) then return true end
        end
        return false
      end
      return rec(1, k)
    end

    for seed = 1, 6 do
      it(("no discontinuous model with one segment fewer meets tol "
        .. "(seed %d)"):format(seed), function()
        local xs, ys, s = {}, {}, seed
        for i = 1, 11 do
          s = (1103515245 * s + 12345) % 2147483648
          xs[i] = i
          ys[i] = math.sin(i * 0.9) + 0.6 * s / 2147483648
        end
        local tol = 0.15
        local m = sw.fit(sw.curve.samples(xs, ys), { tol = tol, continuous = false })
        local k = m:nseg()
        assert.is_true(m:fit_info().max_abs <= tol * (1 + 1e-9))
        assert.is_true(feasible(xs, ys, k, tol * (1 + 1e-9)))
        if k > 1 then assert.is_false(feasible(xs, ys, k - 1, tol)) end
      end)
    end

    -- Continuous models: exact feasibility of fixed knots (on samples) by
    -- vertex enumeration of the band polytope in the knot values (a bounded
    -- nonempty polytope has a vertex; common practice in linear programming).
    local function solve(A, b)
      local n = #b
      local M = {}
      for i = 1, n do M[i] = { table.unpack(A[i]) }; M[i][n + 1] = b[i] end
      for c = 1, n do
        local p = c
        for r = c + 1, n do if math.abs(M[r][c]) > math.abs(M[p][c]) then p = r end end
        if math.abs(M[p][c]) < 1e-12 then return nil end
        M[c], M[p] = M[p], M[c]
        for r = c + 1, n do
          local f = M[r][c] / M[c][c]
          for k = c, n + 1 do M[r][k] = M[r][k] - f * M[c][k] end
        end
      end
      local x = {}
      for r = n, 1, -1 do
        local s = M[r][n + 1]
        for k = r + 1, n do s = s - M[r][k] * x[k] end
        x[r] = s / M[r][r]
      end
      return x
    end

    local function cont_feasible_knots(xs, ys, K, tol)
      local m = #K  -- knot count; values c[1..m]
      local rows = {}
      for i = 1, #xs do
        local j = 1
        while j < m - 1 and xs[i] >= xs[K[j + 1]] do j = j + 1 end
        local t = (xs[i] - xs[K[j]]) / (xs[K[j + 1]] - xs[K[j]])
        local row = {}
        for q = 1, m do row[q] = 0 end
        row[j] = 1 - t; row[j + 1] = t
        rows[#rows + 1] = { row, ys[i] }
      end
      local function ok(c)
        for _, r in ipairs(rows) do
          local v = 0
          for q = 1, m do v = v + r[1][q] * c[q] end
          if math.abs(v - r[2]) > tol * (1 + 1e-9) + 1e-12 then return false end
        end
        return true
      end
      -- every choice of m rows, each at its upper or lower band edge
      local pick = {}
      local function rec(start, depth)
        if depth > m then
          for mask = 0, 2 ^ m - 1 do
            local A, b = {}, {}
            for q = 1, m do
              local r = rows[pick[q]]
              A[q] = r[1]
              b[q] = r[2] + (((mask >> (q - 1)) & 1) == 1 and tol or -tol)
            end
            local c = solve(A, b)
            if c and ok(c) then return true end
          end
          return false
        end
        for r = start, #rows do
          pick[depth] = r
          if rec(r + 1, depth + 1) then return true end
        end
        return false
      end
      return rec(1, 1)
    end

    local function cont_feasible(xs, ys, k, tol)
      local n = #xs
      local K = { 1 }
      local function rec(start, left)
        if left == 0 then
          K[#K + 1] = n
          local r = cont_feasible_knots(xs, ys, K, tol)
          K[#K] = nil
          return r
        end
        for j = start, n - 1 do
          K[#K + 1] = j
          local r = rec(j + 1, left - 1)
          K[#K] = nil
          if r then return true end
        end
        return false
      end
      return rec(2, k - 1)
    end

    for seed = 1, 3 do
      it(("no continuous model with one segment fewer meets tol (seed %d)"):format(seed), function()
        local xs, ys, s = {}, {}, seed
        for i = 1, 8 do
          s = (1103515245 * s + 12345) % 2147483648
          xs[i] = i
          ys[i] = math.sin(i * 0.8) + 0.5 * s / 2147483648
        end
        local tol = 0.12
        local m = sw.fit(sw.curve.samples(xs, ys), { tol = tol })
        local k = m:nseg()
        assert.is_true(m:fit_info().max_abs <= tol * (1 + 1e-9))
        assert.is_true(k > 1)  -- the case must be able to fail
        assert.is_false(cont_feasible(xs, ys, k - 1, tol))
        assert.is_true(cont_feasible(xs, ys, k, tol))  -- the brute force finds the fit's count
      end)
    end
  end)
end)

-- A law over a wide range with a steep knee at its top: the sample grid of
-- the law must follow the knee, or every method misses it.
describe("segwise.fit reference values: wide range with a steep knee", function()
  local NVT = 1.1 * 0.02585

  -- Equal-error construction for is*exp(v/nvt) (the -1 of the law only
  -- shifts it): fewest segments of error <= E covering [a, b], each segment
  -- the longest whose best line (chord slope, parallel tangent, half the
  -- gap: Chebyshev equioscillation, common practice) stays within E.
  local function equal_error_count(is, E, a, b)
    local function f(v) return is * math.exp(v / NVT) end
    local function seg_error(x, h)
      local m = (f(x + h) - f(x)) / h
      local xi = NVT * math.log(m * NVT / is)
      return (f(x) + m * (xi - x) - f(xi)) / 2
    end
    local x, n = a, 0
    while true do
      n = n + 1
      if seg_error(x, b - x) <= E then return n end
      local lo, hi = 0, b - x
      for _ = 1, 100 do
        local mid = (lo + hi) / 2
        if seg_error(x, mid) <= E then lo = mid else hi = mid end
      end
      x = x + lo
    end
  end

  -- Largest |line - f| over every segment of m for f = is*(exp(v/nvt) - 1),
  -- exactly: the line minus a convex f is concave, so its extremes are the
  -- segment's ends and the tangent point nvt*ln(slope*nvt/is).
  local function max_error_law(m, is)
    local function f(v) return is * (math.exp(v / NVT) - 1) end
    local e = 0
    for k = 1, m:nseg() do
      local s = m:seg(k)
      local slope = (s.y_hi - s.y_lo) / (s.hi - s.lo)
      local function err(v) return math.abs(s.y_lo + slope * (v - s.lo) - f(v)) end
      e = math.max(e, err(s.lo), err(s.hi))
      if slope > 0 then
        local xi = NVT * math.log(slope * NVT / is)
        if xi > s.lo and xi < s.hi then e = math.max(e, err(xi)) end
      end
    end
    return e
  end

  -- Largest |line - f| sampled at 400 points in every segment of m.
  local function max_error(m, f)
    local e = 0
    for k = 1, m:nseg() do
      local s = m:seg(k)
      for j = 0, 400 do
        local v = s.lo + (s.hi - s.lo) * j / 400
        e = math.max(e, math.abs(s.y_lo + (s.y_hi - s.y_lo) * j / 400 - f(v)))
      end
    end
    return e
  end

  it("tracks de Boor's asymptotic error over [-14, 0.65] (an exponential 500 nVt wide)", function()
    -- de Boor, A Practical Guide to Splines: E_n ~ (int sqrt|f''| dx)^2 / (16 n^2);
    -- for is*exp(v/nvt), int sqrt(f'') = 2 sqrt(is) (exp(b/2nvt) - exp(a/2nvt)).
    local is = 1e-9
    local d = sw.curve.diode { is = is, n = 1.1, vt = 0.02585, x = "v" }
    local I = 2 * math.sqrt(is) * (math.exp(0.65 / (2 * NVT)) - math.exp(-14 / (2 * NVT)))
    for _, n in ipairs { 32, 64 } do
      local m = sw.fit(d, { lo = -14, hi = 0.65, segments = n })
      assert.is.near(1, m:fit_info().max_abs / (I * I / (16 * n * n)), 0.05)
    end
  end)

  it("meets tol over [-14, 0.65] with the equal-error count", function()
    local is, tol = 1e-9, 0.01
    local d = sw.curve.diode { is = is, n = 1.1, vt = 0.02585, x = "v" }
    local m = sw.fit(d, { lo = -14, hi = 0.65, tol = tol })
    assert.are.equal(equal_error_count(is, tol, -14, 0.65), m:nseg())
    assert.is_true(max_error_law(m, is) <= tol * (1 + 1e-6))
  end)

  it("meets tol on a law reaching 1.7e4 within 1 % of the equal-error count", function()
    local is, tol = 2e-6, 0.01
    local d = sw.curve.diode { is = is, n = 1.1, vt = 0.02585, x = "v" }
    local m = sw.fit(d, { lo = -14, hi = 0.65, tol = tol })
    local nstar = equal_error_count(is, tol, -14, 0.65)
    assert.is_true(m:nseg() >= nstar and m:nseg() <= math.ceil(1.01 * nstar))
    assert.is_true(max_error_law(m, is) <= tol * (1 + 1e-6))
  end)

  describe("with a series resistance (the knee turns into a line)", function()
    local is, rs = 2e-6, 0.02
    local function knee()
      return sw.curve.diode { is = is, n = 1.1, vt = 0.02585, rs = rs, x = "v" }
    end
    -- i = is (exp((v - i rs)/nvt) - 1) solved here by bisection (the residual
    -- falls with i; the root lies between -is and max(v, 0)/rs).
    local function current(v)
      local lo, hi = -is, math.max(v, 0) / rs
      for _ = 1, 200 do
        local mid = (lo + hi) / 2
        if is * (math.exp((v - mid * rs) / NVT) - 1) - mid > 0 then lo = mid else hi = mid end
        if hi - lo <= 1e-15 * math.abs(hi) then break end
      end
      return (lo + hi) / 2
    end

    it("meets a tolerance of 0.01 checked against an independent solution", function()
      local tol = 0.01
      local m = sw.fit(knee(), { lo = -14, hi = 0.65, tol = tol })
      assert.is_true(max_error(m, current) <= tol * (1 + 1e-6))
      -- fewest: the best model with one segment fewer misses tol
      local fewer = sw.fit(knee(), { lo = -14, hi = 0.65, segments = m:nseg() - 1 })
      assert.is_true(max_error(fewer, current) > tol)
    end)

    it("gains with every segment, at de Boor's 1/n^2 rate", function()
      local prev
      local errs = {}
      for _, n in ipairs { 10, 12, 14, 16 } do
        local m = sw.fit(knee(), { lo = -14, hi = 0.65, segments = n })
        errs[n] = max_error(m, current)
        if prev then assert.is_true(errs[n] < 0.9 * prev) end
        prev = errs[n]
      end
      -- E_n ~ C / n^2 (de Boor): E_16 / E_10 near (10/16)^2, within 20 %
      assert.is.near((10 / 16) ^ 2, errs[16] / errs[10], 0.2 * (10 / 16) ^ 2)
    end)
  end)
end)
