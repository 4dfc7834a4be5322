-- sw.fit(curve, opts): one call for every criterion and breakpoint scheme.
-- Checks option names and types (util.check_opts) and hands the work to
-- core.fit: every rule about the values, their defaults and which go
-- together belongs to the C core (csrc/core/fit/fit_opts.c), so the core
-- used without Lua obeys the same rules.  The model keeps how it was made:
-- m:fit_info().
local util = require "segwise.util"

local CRITERIA = { "minimax", "lsq", "interp", "tangent", "chord" }

local SPEC = {
  lo = "number", hi = "number", segments = "number", tol = "number",
  knots = "string|table", criterion = CRITERIA, error = { "abs", "rel" },
  rel_floor = "number", continuous = "boolean", at = "number",
  through = "table", slope_first = "number", slope_last = "number",
  monotone = "boolean", grid = "number", offset = "number", max_segments = "number",
}

return function(sw, core)
  function sw.fit(curve, opts)
    if getmetatable(curve) == nil or getmetatable(curve).__name ~= "segwise.Curve" then
      error(("segwise.fit: curve must be a segwise curve (got %s)"):format(util.describe(curve)), 2)
    end
    opts = util.check_opts("fit", opts, SPEC)
    local m = util.call(2, "fit", core.fit, curve, opts)
    return m
  end
end
