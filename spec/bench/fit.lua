-- Fits on 1e4, 1e5 and 1e6 samples of a smooth measured-like curve
-- (y = 1e-3 ln(1 + x/0.05) + 0.02 x^2 on [0, 0.75], given as arrays):
-- tolerance fit (fewest segments within 1e-6), optimal-knot minimax and
-- least squares with 16 segments, and fixed uniform knots for both.  No
-- peer: the table shows how the time grows with the samples.  A size is
-- skipped when the previous one predicts more than FIT_BUDGET seconds a fit
-- (time x 10 a decade); fits slower than FIT_SLOW seconds run once instead
-- of B.rounds times.
local sw = require "segwise"

local FIT_BUDGET, FIT_SLOW, TOL_TARGET = 40, 2, 0.2

local function samples(n)
  local xs, ys = sw.array(n), sw.array(n)
  for i = 1, n do
    local x = 0.75 * (i - 1) / (n - 1)
    xs[i] = x
    ys[i] = 1e-3 * math.log(1 + x / 0.05) + 0.02 * x * x
  end
  return sw.curve.samples(xs, ys)
end

local KINDS = {
  { tag = "tol", name = "tolerance 1e-6, fewest segments", opts = { tol = 1e-6 } },
  { tag = "minimax_optimal", name = "minimax, 16 segments, optimal knots",
    opts = { segments = 16, criterion = "minimax", knots = "optimal" } },
  { tag = "lsq_optimal", name = "least squares, 16 segments, optimal knots",
    opts = { segments = 16, criterion = "lsq", knots = "optimal" } },
  { tag = "minimax_uniform", name = "minimax, 16 segments, uniform knots",
    opts = { segments = 16, criterion = "minimax", knots = "uniform" } },
  { tag = "lsq_uniform", name = "least squares, 16 segments, uniform knots",
    opts = { segments = 16, criterion = "lsq", knots = "uniform" } },
}

return function(B)
  local curves = {}
  for _, n in ipairs { 10000, 100000, 1000000 } do
    curves[#curves + 1] = { n = n, c = samples(n) }
  end
  for _, kind in ipairs(KINDS) do
    local last
    for _, s in ipairs(curves) do
      if last and last * 10 > FIT_BUDGET then
        B.row("fit", kind.name, s.n, "segwise sw.fit", nil,
          ("skipped: about %.0f s a fit predicted from the smaller size"):format(last * 10))
        if kind.tag == "tol" and s.n == 1000000 then
          B.note(("tolerance fit of 1e6 samples: skipped (predicted %.0f s; target < %.1f s)")
            :format(last * 10, TOL_TARGET))
        end
      else
        local m
        local function run()
          local t = os.clock()
          m = sw.fit(s.c, kind.opts)
          return os.clock() - t
        end
        local times = { run() }
        if times[1] < FIT_SLOW then
          for r = 2, B.rounds do
            collectgarbage()
            times[r] = run()
          end
        end
        local runs = #times
        local t = B.median(times)
        local info = m:fit_info()
        local growth = last and (" (x%.1f for 10x the samples)"):format(t / last) or ""
        B.row("fit", kind.name, s.n, "segwise sw.fit", t,
          ("%d segments, max error %.2g%s%s"):format(m:nseg(), info.max_abs or 0 / 0, growth,
            runs == 1 and "; 1 run" or ""))
        if kind.tag == "tol" and s.n == 1000000 then
          B.ratio("fit_tol_1e6_target_0.2s_vs_segwise", TOL_TARGET, t)
          B.note(("tolerance fit of 1e6 samples: %.3g s (target < %.1f s: %s)")
            :format(t, TOL_TARGET, t < TOL_TARGET and "met" or "missed"))
        end
        last = t
        collectgarbage()
      end
    end
  end
end
