-- segwise: piecewise-linear device models and the circuits they sit in.
-- This file shapes arguments and fills defaults; every numeric step runs in
-- the C module segwise.core.
local core = require "segwise.core"
local util = require "segwise.util"

local sw = { version = core.version, core = core }
local check_opts, check_number = util.check_opts, util.check_number
-- core calls from a public function: errors point at the user's line
-- (util.call finds it on the stack)
local function call(fname, f, ...) return util.call(fname, f, ...) end

---------------------------------------------------------------- curves
sw.curve = {}

-- A device temperature: 150-1000 K covers every junction a law here models;
-- outside it the caller almost surely gave degrees Celsius.
local KELVIN_LO, KELVIN_HI = 150, 1000
local function check_kelvin(fname, name, t)
  if not (t >= KELVIN_LO and t <= KELVIN_HI) then
    local msg = "segwise.%s: %s (%g) must be between %d and %d K; the law takes kelvin "
      .. "(%g degrees C would be %.2f K)"
    error(msg:format(fname, name, t, KELVIN_LO, KELVIN_HI, t, t + 273.15), 3)
  end
end

-- Measured points y(x).  opts: sort (default false), duplicates = "error" | "mean".
function sw.curve.samples(xs, ys, opts)
  opts = check_opts("curve.samples", opts, { sort = "boolean", duplicates = { "error", "mean" } })
  if type(xs) ~= "table" and not util.is_array(xs) then
    error("segwise.curve.samples: xs must be a table of numbers (got " .. util.describe(xs)
      .. ")", 2)
  end
  if type(ys) ~= "table" and not util.is_array(ys) then
    error("segwise.curve.samples: ys must be a table of numbers (got " .. util.describe(ys)
      .. ")", 2)
  end
  return (call("curve.samples", core.curve_samples, xs, ys, opts.sort or false,
    opts.duplicates == "mean"))
end

-- Shockley diode with series resistance.  x = "v" gives i(v), "i" gives v(i).
-- vt defaults to kT/q at temp (default 300 K).
function sw.curve.diode(p)
  p = check_opts("curve.diode", p, {
    is = "number", n = "number", vt = "number", rs = "number", x = { "v", "i" },
    temp = "number", lo = "number", hi = "number" })
  if p.is == nil then error("segwise.curve.diode: is (saturation current, A) is required", 2) end
  if p.vt and p.temp then error("segwise.curve.diode: give vt or temp, not both", 2) end
  if p.temp ~= nil then check_kelvin("curve.diode", "temp", p.temp) end
  local vt = p.vt or core.thermal_voltage(p.temp or 300)
  return (call("curve.diode", core.curve_diode, p.is, p.n or 1, vt, p.rs or 0, p.x == "i",
    p.lo, p.hi))
end

-- y = k * sign(x) * |x|^n, odd-symmetric (varistor-like laws).
function sw.curve.power(p)
  p = check_opts("curve.power", p, { k = "number", n = "number", lo = "number", hi = "number" })
  if p.k == nil or p.n == nil then error("segwise.curve.power: k and n are required", 2) end
  return (call("curve.power", core.curve_power, p.k, p.n, p.lo, p.hi))
end

-- Any Lua function of x on [lo, hi].
function sw.curve.fn(f, opts)
  if type(f) ~= "function" then
    error("segwise.curve.fn: f must be a function (got " .. util.describe(f) .. ")", 2)
  end
  opts = check_opts("curve.fn", opts, { lo = "number", hi = "number" })
  if opts.lo == nil or opts.hi == nil then error("segwise.curve.fn: lo and hi are required", 2) end
  return (call("curve.fn", core.curve_fn, f, check_number("curve.fn", "lo", opts.lo),
    check_number("curve.fn", "hi", opts.hi)))
end

-- kT/q at a temperature in kelvin (default 300 K).
function sw.thermal_voltage(kelvin)
  if kelvin == nil then return core.thermal_voltage(300) end
  check_number("thermal_voltage", "kelvin", kelvin)
  check_kelvin("thermal_voltage", "kelvin", kelvin)
  return core.thermal_voltage(kelvin)
end

---------------------------------------------------------------- models
local EXTEND = { "line", "hold", "error" }

local function pwl_points(_, p)
  p = check_opts("pwl", p, { x = "table", y = "table", extend = EXTEND })
  if p.x == nil or p.y == nil then error("segwise.pwl: x and y are required", 2) end
  return (call("pwl", core.pwl_points, p.x, p.y, p.extend or "line"))
end

sw.pwl = setmetatable({}, { __call = pwl_points })

-- Segments {{lo=, hi=, slope=, intercept=}, ...}; consecutive segments must
-- join (hi of one is lo of the next) but may jump in value.
function sw.pwl.segments(list, opts)
  opts = check_opts("pwl.segments", opts, { extend = EXTEND })
  if type(list) ~= "table" then
    error("segwise.pwl.segments: expected a list of segments (got " .. util.describe(list)
      .. ")", 2)
  end
  local lo, hi, slope, icpt = {}, {}, {}, {}
  for k, s in ipairs(list) do
    if type(s) ~= "table" then
      error(("segwise.pwl.segments: segment %d must be a table"):format(k), 2)
    end
    for _, f in ipairs { "lo", "hi", "slope", "intercept" } do
      if type(s[f]) ~= "number" then
        error(("segwise.pwl.segments: segment %d: %s must be a number (got %s)"):format(k, f,
          util.describe(s[f])), 2)
      end
    end
    lo[k], hi[k], slope[k], icpt[k] = s.lo, s.hi, s.slope, s.intercept
  end
  if #lo == 0 then error("segwise.pwl.segments: need at least 1 segment", 2) end
  return (call("pwl.segments", core.pwl_segments, lo, hi, slope, icpt, opts.extend or "line"))
end

-- Thevenin-style check that a model has nothing freed behind it.
sw.is_model = util.is_model

---------------------------------------------------------------- features
-- Each feature module returns a table of its public names, nested as they
-- go in sw (read's {curve = {read = f}, pwl = {load = f}, array = a}).
local function merge(into, names)
  for k, v in pairs(names) do
    if type(v) == "table" and getmetatable(v) == nil and type(into[k]) == "table" then
      merge(into[k], v)
    else
      into[k] = v
    end
  end
end
for _, name in ipairs { "read", "fit", "network" } do
  if package.searchpath("segwise." .. name, package.path) then
    merge(sw, require("segwise." .. name))
  end
end

for _, name in ipairs { "report", "plot" } do
  if package.searchpath("segwise." .. name, package.path) then
    sw[name] = require("segwise." .. name)
  end
end
if sw.report then
  sw.si, sw.parse_si = sw.report.si, sw.report.parse_si
end

return sw
