-- Fewest-segment (tol) fits are optimal in count.  For f(x) = x^2 on
-- [0, L] the best uniform error of k segments has a closed form: every
-- segment of width w = L/k has best-line error w^2/8 (the Chebyshev line
-- of a parabola on an interval of width w: half the chord's greatest gap
-- w^2/4), and uniform knots equalise them, so E_k = L^2 / (8 k^2).  The
-- same holds for continuous models: the interpolant at uniform knots moved
-- down by w^2/8 touches the error +-E at 2k + 1 alternating points, as
-- many as its 2k free parameters need (Chebyshev alternation; approximation
-- theory, from memory).  A tolerance just above E_k must then give k
-- segments, and one just below it k + 1.
local sw = require "segwise"

describe("segwise.fit tol: the count is optimal", function()
  local L = 3
  local parabola = sw.curve.power { k = 1, n = 2 }
  for _, continuous in ipairs { false, true } do
    for _, k in ipairs { 1, 2, 3, 5, 8 } do
      local Ek = L ^ 2 / (8 * k ^ 2)
      it(("x^2 on [0, %d], %s, %d segments at E = %.6g"):format(L,
        continuous and "continuous" or "discontinuous", k, Ek), function()
        local above = sw.fit(parabola, { lo = 0, hi = L, tol = Ek * (1 + 1e-3),
          continuous = continuous })
        assert.are.equal(k, above:nseg())
        assert.is_true(above:fit_info().max_abs <= Ek * (1 + 1e-3))
        local below = sw.fit(parabola, { lo = 0, hi = L, tol = Ek * (1 - 1e-3),
          continuous = continuous })
        assert.are.equal(k + 1, below:nseg())
      end)
    end
  end

  it("a fixed count reaches the closed-form level (to 1e-5 relative)", function()
    for _, k in ipairs { 2, 4, 7 } do
      local Ek = L ^ 2 / (8 * k ^ 2)
      for _, continuous in ipairs { false, true } do
        local m = sw.fit(parabola, { lo = 0, hi = L, segments = k, continuous = continuous })
        local got = m:fit_info().max_abs
        assert.is_true(got >= Ek * (1 - 1e-9), ("below the optimum: %.17g"):format(got))
        assert.is_true(got <= Ek * (1 + 1e-5), ("k = %d: %.17g vs %.17g"):format(k, got, Ek))
      end
    end
  end)

  it("a generous tol gives the best model at its count, not the first within tol", function()
    -- the best line to x^2 on [-1, 1] is y = 1/2, error 1/2 (Chebyshev: the
    -- error equioscillates at -1, 0, 1); tol = 10 allows a line far worse
    local f = sw.curve.fn(function(x) return x * x end, { lo = -1, hi = 1 })
    for _, continuous in ipairs { true, false } do
      local m = sw.fit(f, { tol = 10, continuous = continuous })
      assert.are.equal(1, m:nseg())
      assert.is_true(m:fit_info().max_abs <= 0.5 * (1 + 1e-4), m:fit_info().max_abs)
    end
  end)
end)
