-- sw.fit(curve, opts): one call for every criterion and breakpoint scheme.
-- Checks option names and types (util.check_opts) and hands the work to
-- core.fit: every rule about the values, their defaults and which go
-- together belongs to the C core (csrc/core/fit/fit_opts.c), so the core
-- used without Lua obeys the same rules.  The model keeps how it was made:
-- m:fit_info().
local core = require "segwise.core"
local util = require "segwise.util"

local CRITERIA = { "minimax", "lsq", "interp", "tangent", "chord" }

local SPEC = {
  lo = "number", hi = "number", segments = "number", tol = "number",
  knots = "string|table", criterion = CRITERIA, error = { "abs", "rel" },
  rel_floor = "number", continuous = "boolean", at = "number",
  through = "table", slope_first = "number", slope_last = "number",
  monotone = "boolean", grid = "number", offset = "number", max_segments = "number",
}

-- How the model was made, beside its errors in m:fit_info(): m:save writes
-- these into the model file and sw.pwl.load reads them back
-- (csrc/core/pwl/pwl_prov.c).  The range is the model's span (the fit's
-- lo and hi are its end knots).
local function provenance(m, curve)
  local info, xs = m:fit_info(), m:knots()
  info.curve = curve:params()
  info.source = core.curve_sources and core.curve_sources[curve]
  info.lo, info.hi = xs[1], xs[#xs]
  info.made = os.date("!%Y-%m-%dT%H:%M:%SZ")
end

local M = {}

function M.fit(curve, opts)
  if getmetatable(curve) == nil or getmetatable(curve).__name ~= "segwise.Curve" then
    error(("segwise.fit: curve must be a segwise curve (got %s)"):format(util.describe(curve)), 2)
  end
  opts = util.check_opts("fit", opts, SPEC)
  local m = util.call("fit", core.fit, curve, opts)
  provenance(m, curve)
  return m
end

return M
