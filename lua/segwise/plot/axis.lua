--- segwise.plot.axis: axis ranges, "nice" ticks (1-2-5 steps, decades on
-- log axes) and SI tick labels.  Layout only: no fitting or solving here.
-- @module segwise.plot.axis

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local report = require "segwise.report"

local M = {}
local floor, ceil, abs, huge, max = math.floor, math.ceil, math.abs, math.huge, math.max
local fmt = numtext.format

-- Decimal exponent of |v| as printed, immune to log10 rounding (log10(1e-3)
-- may come out as -2.9999...).
local function dexp(v)
  return tonumber(fmt("%.12e", abs(v)):match("e([-+]%d+)$"))
end

local function pow10(k) return tonumber("1e" .. k) end

local function finite(v) return type(v) == "number" and v == v and v ~= huge and v ~= -huge end
M.finite = finite

local BIGGEST = 1.7976931348623157e308 -- the largest double (IEEE 754 binary64)
local function clamp(v) return v > BIGGEST and BIGGEST or (v < -BIGGEST and -BIGGEST or v) end

-- The 1-2-5 step nearest above span/target (span may be given as lo, hi:
-- hi - lo itself may overflow for values near the largest double).
local function nice_step(span, target, lo)
  local raw = lo and (span / target - lo / target) or span / target
  local e = dexp(raw)
  local mag = pow10(e)
  local norm = raw / mag
  local m
  if norm <= 1.0000001 then m = 1 elseif norm <= 2.0000001 then m = 2
  elseif norm <= 5.0000001 then m = 5 else m = 10 end
  return m * mag, m, e
end
M.nice_step = nice_step

-- A range narrower than about 1e-9 of its magnitude cannot get distinct
-- tick labels in doubles: widen it (and a zero-width one) around its middle.
local function widen(lo, hi)
  if lo == hi then
    local d = (lo == 0) and 1 or abs(lo) * 0.1
    return clamp(lo - d), clamp(hi + d)
  end
  local need = max(abs(lo), abs(hi)) * 1e-9
  if hi - lo < need then
    local mid = lo / 2 + hi / 2
    return mid - need / 2, mid + need / 2
  end
  return lo, hi
end

-- Linear ticks.  With `tight`, the range stays [lo, hi] and only ticks
-- inside are kept; otherwise it widens to the outer ticks.
local SMALLER = { [1] = 0.5, [2] = 0.5, [5] = 0.4, [10] = 0.5 }   -- next 1-2-5 step down

local function linear(lo, hi, target, tight)
  lo, hi = widen(lo, hi)
  local step, m = nice_step(hi, target, lo)
  local k0 = floor(lo / step + 1e-9)
  local k1 = ceil(hi / step - 1e-9)
  -- outer ticks beyond the largest double: keep the data's range instead
  if not finite(k0 * step) or not finite(k1 * step) then tight = true end
  -- when whole steps would waste over a quarter of the axis, take the next
  -- smaller step if the tick count stays reasonable (at most 2*target+1)
  if not tight and (hi / 2 - lo / 2) < 0.375 * (k1 - k0) * step then
    local s2 = step * SMALLER[m]
    local j0, j1 = floor(lo / s2 + 1e-9), ceil(hi / s2 - 1e-9)
    if j1 - j0 <= 2 * target then step, k0, k1 = s2, j0, j1 end
  end
  local ticks = {}
  for k = k0, k1 do
    local v = k * step
    if k == 0 then v = 0.0 end
    if finite(v) and (not tight or (v >= lo - step * 1e-9 and v <= hi + step * 1e-9)) then
      ticks[#ticks + 1] = v
    end
  end
  if not tight then lo, hi = k0 * step, k1 * step end
  return lo, hi, ticks, step
end

local function log_ticks(lo, hi, target, tight)
  if lo == hi then lo, hi = lo / 2, clamp(hi * 2) end
  -- decades whose power of ten is a normal or subnormal double
  local d0 = math.max(-323, floor(math.log(lo, 10) + 1e-9))
  local d1 = math.min(308, ceil(math.log(hi, 10) - 1e-9))
  if d1 == d0 then if d1 < 308 then d1 = d0 + 1 else d0 = d1 - 1 end end
  local ticks = {}
  if d1 - d0 <= 2 then
    -- few decades: 1-2-5 in each decade
    for d = d0, d1 do
      for _, m in ipairs { 1, 2, 5 } do
        local v = tonumber(m .. "e" .. d)
        if (d < d1 or m == 1) then ticks[#ticks + 1] = v end
      end
    end
  else
    -- every k-th decade, aligned to multiples of k (with k = 3 the ticks
    -- fall on whole prefixes: 1 pA, 1 nA, 1 µA)
    local every = max(1, ceil((d1 - d0) / target))
    if every == 2 or every == 4 then every = every == 2 and 2 or 3 end
    for d = d0, d1 do
      if d % every == 0 then ticks[#ticks + 1] = pow10(d) end
    end
    if #ticks < 2 then
      ticks = {}
      for d = d0, d1 do ticks[#ticks + 1] = pow10(d) end
    end
  end
  if tight then
    local kept = {}
    for _, v in ipairs(ticks) do
      if v >= lo * (1 - 1e-9) and v <= hi * (1 + 1e-9) then kept[#kept + 1] = v end
    end
    ticks = kept
  else
    lo, hi = math.min(lo, pow10(d0)), math.max(hi, pow10(d1))
  end
  return lo, hi, ticks
end

--- Builds an axis from a data range.
-- @tparam number lo smallest value (finite; > 0 on a log axis)
-- @tparam number hi largest value
-- @tparam[opt] table opts {log = bool, unit = "A", n = 6 (target tick count),
--   tight = bool (keep lo/hi, ticks only inside), min =, max = (fixed bounds)}
-- @treturn table {lo, hi, log, ticks = {...}, labels = {...}, map = function(v) -> 0..1 or nil}
function M.new(lo, hi, opts)
  opts = opts or {}
  if not finite(lo) or not finite(hi) then
    error(fmt("segwise.plot: axis range must be finite (got %s .. %s)", numtext.str(lo),
      numtext.str(hi)), 2)
  end
  if lo > hi then lo, hi = hi, lo end
  local unit = opts.unit or ""
  local target = opts.n or 6
  local ax = { log = opts.log and true or false, unit = unit }
  local ticks, step
  if ax.log then
    if lo <= 0 then
      error(fmt("segwise.plot: log axis needs positive values (smallest is %s)",
        numtext.str(lo)), 2)
    end
    ax.lo, ax.hi, ticks = log_ticks(lo, hi, target, opts.tight)
  else
    ax.lo, ax.hi, ticks, step = linear(lo, hi, target, opts.tight)
  end
  -- a bound the user fixed is kept exactly; ticks outside it are dropped
  if opts.min or opts.max then
    ax.lo, ax.hi = opts.min or ax.lo, opts.max or ax.hi
    if ax.lo > ax.hi then
      error(fmt("segwise.plot: axis min (%s) is above its max (%s)", numtext.str(ax.lo),
        numtext.str(ax.hi)), 2)
    end
    if ax.lo == ax.hi then -- one value: widened, or every point would map to 0/0
      if ax.log then ax.lo, ax.hi = ax.lo / 2, clamp(ax.hi * 2)
      else ax.lo, ax.hi = widen(ax.lo, ax.hi) end
      local _, _, t2, s2 = (ax.log and log_ticks or linear)(ax.lo, ax.hi, target, true)
      ticks, step = t2, s2
    end
    local kept, span = {}, ax.hi - ax.lo
    for _, v in ipairs(ticks) do
      if v >= ax.lo - 1e-9 * span and v <= ax.hi + 1e-9 * span then kept[#kept + 1] = v end
    end
    ticks = kept
  end
  ax.ticks, ax.step = ticks, step
  ax.labels = M.labels(ticks, unit, ax.log, step)
  local a, b = ax.lo, ax.hi
  if ax.log then
    local la, lb = math.log(a, 10), math.log(b, 10)
    ax.map = function(v)
      if not finite(v) or v <= 0 then return nil end
      return (math.log(v, 10) - la) / (lb - la)
    end
  else
    ax.map = function(v) -- halves first: b - a may overflow
      if not finite(v) then return nil end
      return (v / 2 - a / 2) / (b / 2 - a / 2)
    end
  end
  return ax
end

--- Tick labels with SI prefixes.  Linear axes share one prefix (from the
-- largest tick) and show just the digits the step needs: 0 mA, 10 mA, 20 mA.
-- Log axes label each decade with its own prefix: 1 µA, 10 µA, 100 µA.
function M.labels(ticks, unit, log, step)
  local labels = {}
  if log or not step then
    for i, v in ipairs(ticks) do labels[i] = report.si(v, unit, 3) end
    return labels
  end
  local biggest = 0
  for _, v in ipairs(ticks) do biggest = max(biggest, abs(v)) end
  local e3 = report.si_step(biggest, 3) or 0
  local pre = report.PREFIX[e3] or ""
  local se = dexp(step)
  if biggest >= 1e27 then -- beyond the largest prefix: exponent form, each tick its own
    for i, v in ipairs(ticks) do
      labels[i] = v == 0 and "0" or report.si(v, unit, math.min(15, max(1, dexp(v) - se + 1)))
    end
    return labels
  end
  for i, v in ipairs(ticks) do
    local s
    if v == 0 then s = "0"
    else
      local d = max(1, dexp(v) - se + 1)
      s = report.si_in(v, e3, math.min(d, 15))
    end
    if unit ~= "" or pre ~= "" then
      s = s .. (unit ~= "" and " " or "") .. pre .. unit
    end
    labels[i] = s
  end
  return labels
end

return M
