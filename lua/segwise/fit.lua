-- sw.fit(curve, opts): one call for every criterion and breakpoint scheme.
-- Checks option names and types, fills the defaults, and hands the work to
-- core.fit (csrc/core/fit/).  The model keeps how it was made: m:fit_info().
local util = require "segwise.util"

local MAX_SEGMENTS, MAX_GRID = 100000, 10000000
local CRITERIA = { "minimax", "lsq", "interp", "tangent", "chord" }
local SCHEMES = { "uniform", "geometric", "curvature", "optimal" }

local SPEC = {
  lo = "number", hi = "number", segments = "number", tol = "number",
  knots = "string|table", criterion = CRITERIA, error = { "abs", "rel" },
  rel_floor = "number", continuous = "boolean", at = "number",
  through = "table", slope_first = "number", slope_last = "number",
  monotone = "boolean", grid = "number", offset = "number", max_segments = "number",
}

local function fail(msg, ...)
  error("segwise.fit: " .. msg:format(...), 3)
end

local function finite(name, v)
  if v ~= nil and (v ~= v or v == math.huge or v == -math.huge) then
    fail("%s must be finite (got %s)", name, tostring(v))
  end
end

-- An explicit knot list: sorted, inside [lo, hi]; the range ends are added
-- when missing.
local function knot_list(list, lo, hi)
  if util.is_array(list) then return list end
  local out = {}
  for i, x in ipairs(list) do
    if type(x) ~= "number" or x ~= x then fail("knots[%d] must be a number (got %s)", i, util.describe(x)) end
    if x < lo or x > hi then fail("knots[%d] = %g is outside the range [%g, %g]", i, x, lo, hi) end
    if i > 1 and not (x > list[i - 1]) then
      fail("knots must be strictly increasing (knots[%d] = %g after knots[%d] = %g)", i, x, i - 1, list[i - 1])
    end
    out[#out + 1] = x
  end
  if out[1] ~= lo then table.insert(out, 1, lo) end
  if out[#out] ~= hi then out[#out + 1] = hi end
  return out
end

return function(sw, core)
  function sw.fit(curve, opts)
    if getmetatable(curve) == nil or getmetatable(curve).__name ~= "segwise.Curve" then
      fail("curve must be a segwise curve (got %s)", util.describe(curve))
    end
    opts = util.check_opts("fit", opts, SPEC)
    local o = {}
    for k, v in pairs(opts) do o[k] = v end
    for _, k in ipairs { "lo", "hi", "tol", "rel_floor", "at", "slope_first", "slope_last", "segments", "offset", "max_segments" } do
      finite(k, o[k])
    end
    local okd, dlo, dhi = pcall(curve.domain, curve)
    if not okd then fail("curve: %s", tostring(dlo):gsub("^.-: ", "")) end
    o.lo = o.lo or dlo
    o.hi = o.hi or dhi
    if o.lo == -math.huge or o.hi == math.huge then
      fail("the curve's domain [%g, %g] is unbounded; give lo and hi (the operating range)", o.lo, o.hi)
    end
    if not (o.lo < o.hi) then fail("lo (%g) must be below hi (%g)", o.lo, o.hi) end
    if o.lo < dlo or o.hi > dhi then
      fail("range [%g, %g] is outside the curve's domain [%g, %g]", o.lo, o.hi, dlo, dhi)
    end
    if o.tol ~= nil and o.segments ~= nil then fail("give segments or tol, not both") end
    if o.tol ~= nil and not (o.tol > 0) then fail("tol (%g) must be positive", o.tol) end
    if o.segments ~= nil and (o.segments < 1 or o.segments ~= math.floor(o.segments)) then
      fail("segments (%g) must be an integer of at least 1", o.segments)
    end
    if o.segments ~= nil and o.segments > MAX_SEGMENTS then
      fail("segments (%g) is too large (at most %d)", o.segments, MAX_SEGMENTS)
    end
    if o.max_segments ~= nil then
      if o.tol == nil then fail("max_segments goes with tol (a cap on the fewest-segment search)") end
      if o.max_segments < 1 or o.max_segments ~= math.floor(o.max_segments) or o.max_segments > MAX_SEGMENTS then
        fail("max_segments (%g) must be an integer from 1 to %d", o.max_segments, MAX_SEGMENTS)
      end
    end
    if o.grid ~= nil and o.grid > MAX_GRID then fail("grid (%g) is too large (at most %d)", o.grid, MAX_GRID) end
    if o.rel_floor ~= nil and not (o.rel_floor > 0) then fail("rel_floor (%g) must be positive", o.rel_floor) end
    if o.grid ~= nil and (o.grid < 3 or o.grid ~= math.floor(o.grid)) then
      fail("grid (%g) must be an integer of at least 3", o.grid)
    end
    o.criterion = o.criterion or "minimax"
    o.error = o.error or "abs"
    if o.continuous == nil then o.continuous = true end
    if type(o.knots) == "string" then
      local ok = false
      for _, s in ipairs(SCHEMES) do ok = ok or s == o.knots end
      if not ok then
        fail("knots must be one of \"uniform\", \"geometric\", \"curvature\", \"optimal\" or a list (got %q)", o.knots)
      end
    elseif o.knots == nil then
      local c = o.criterion
      o.knots = (c == "minimax" or c == "lsq") and "optimal" or "uniform"
    else
      if o.tol ~= nil then fail("tol and an explicit knot list exclude each other") end
      o.knots = knot_list(o.knots, o.lo, o.hi)
      local n = #o.knots - 1
      if o.segments ~= nil and o.segments ~= n then
        fail("segments (%d) disagrees with the knot list (%d segments)", o.segments, n)
      end
      o.segments = n
    end
    if o.tol == nil and o.segments == nil then
      o.segments = (o.criterion == "tangent" or o.criterion == "chord") and 1 or 4
    end
    if o.offset ~= nil and o.knots ~= "geometric" then fail("offset applies to knots = \"geometric\" only") end
    if o.criterion == "tangent" and o.at == nil then
      fail("criterion 'tangent' needs at (the operating point)")
    end
    if o.through ~= nil then
      for i, p in ipairs(o.through) do
        if type(p) ~= "table" or type(p[1]) ~= "number" or type(p[2]) ~= "number" then
          fail("through[%d] must be a pair {x, y} of numbers", i)
        end
      end
      local sorted = {}
      for i, p in ipairs(o.through) do sorted[i] = { p[1], p[2] } end
      table.sort(sorted, function(a, b) return a[1] < b[1] end)
      o.through = sorted
    end
    local m = util.call(2, "fit", core.fit, curve, o)
    return m
  end
end
