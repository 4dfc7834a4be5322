--- segwise.plot.common: checks a plot spec, reads series into plain arrays,
-- finds the data range, builds both axes.  Shared by the SVG and terminal
-- back ends.  Layout only: no fitting or solving here.
-- @module segwise.plot.common

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local axis = require "segwise.plot.axis"

local M = {}
local fmt = numtext.format
local finite = axis.finite

-- Okabe-Ito colour-blind-safe palette (M. Okabe and K. Ito, "Color
-- Universal Design", 2002/2008, https://jfly.uni-koeln.de/color/), ordered
-- so the first colours have the most contrast on white; yellow is last.
M.PALETTE = {
  { name = "blue",           hex = "#0072B2", rgb = { 0, 114, 178 } },
  { name = "vermillion",     hex = "#D55E00", rgb = { 213, 94, 0 } },
  { name = "bluish green",   hex = "#009E73", rgb = { 0, 158, 115 } },
  { name = "reddish purple", hex = "#CC79A7", rgb = { 204, 121, 167 } },
  { name = "orange",         hex = "#E69F00", rgb = { 230, 159, 0 } },
  { name = "sky blue",       hex = "#56B4E9", rgb = { 86, 180, 233 } },
  { name = "black",          hex = "#000000", rgb = { 0, 0, 0 } },
  { name = "yellow",         hex = "#F0E442", rgb = { 240, 228, 66 } },
}

-- Dash patterns, the second cue for grey-scale print: {on, off, ...} in
-- units of the line width.  The first is solid.
M.DASHES = { {}, { 6, 3 }, { 2, 2 }, { 8, 3, 2, 3 }, { 12, 4 }, { 1, 3 }, { 4, 2, 1, 2, 1, 2 },
  { 10, 2, 2, 2 } }

M.MARKERS = { "circle", "square", "triangle", "diamond", "cross", "plus", "triangle_down", "star" }

local STYLES = { line = true, points = true, step = true }

-- Well-formed UTF-8 sequences by lead byte (RFC 3629: no overlong forms, no
-- surrogates, nothing above U+10FFFF), as anchored patterns.
local SEQ = {}
for b = 0xC2, 0xDF do SEQ[b] = "^[\xC2-\xDF][\x80-\xBF]" end
SEQ[0xE0] = "^\xE0[\xA0-\xBF][\x80-\xBF]"
for b = 0xE1, 0xEF do SEQ[b] = "^[\xE1-\xEF][\x80-\xBF][\x80-\xBF]" end
SEQ[0xED] = "^\xED[\x80-\x9F][\x80-\xBF]"
SEQ[0xF0] = "^\xF0[\x90-\xBF][\x80-\xBF][\x80-\xBF]"
for b = 0xF1, 0xF3 do SEQ[b] = "^[\xF1-\xF3][\x80-\xBF][\x80-\xBF][\x80-\xBF]" end
SEQ[0xF4] = "^\xF4[\x80-\x8F][\x80-\xBF][\x80-\xBF]"
local REPLACEMENT = "\u{FFFD}"

--- Any value as label text that is valid UTF-8 and legal in XML 1.0: each
-- byte that starts no well-formed sequence becomes U+FFFD, and so do the
-- noncharacters U+FFFE and U+FFFF; control characters other than tab and
-- line ends are dropped.  One pass over the bytes.
function M.text(v)
  local s = numtext.str(v)
  local out, i, n = {}, 1, #s
  while i <= n do
    local hi = s:find("[\x80-\xFF]", i)
    if not hi then out[#out + 1] = s:sub(i); break end
    out[#out + 1] = s:sub(i, hi - 1)
    local pat = SEQ[s:byte(hi)]
    local e = pat and select(2, s:find(pat, hi))
    if e then out[#out + 1] = s:sub(hi, e); i = e + 1
    else out[#out + 1] = REPLACEMENT; i = hi + 1 end
  end
  s = table.concat(out)
  s = s:gsub("\xEF\xBF[\xBE\xBF]", REPLACEMENT)
  return (s:gsub("[%z\1-\8\11\12\14-\31\127]", ""))
end
local text = M.text

local function len_of(a)
  local ok, n = pcall(function() return #a end)
  if ok and math.type(n) == "integer" then return n end
  return nil
end

local function callable(f)
  if type(f) == "function" then return true end
  local mt = (type(f) == "table" or type(f) == "userdata") and getmetatable(f)
  return type(mt) == "table" and mt.__call ~= nil
end

-- Reads one coordinate array (table or sw.array) into a Lua table; nil
-- entries and NaN become gaps (NaN), anything else must be a number.
local function read_array(a, what, F)
  local n = len_of(a)
  if type(a) ~= "table" and type(a) ~= "userdata" or not n then
    error(fmt("%s: %s must be an array of numbers (got %s)", F, what, type(a)), 4)
  end
  local out = {}
  for i = 1, n do
    local v = a[i]
    if v == nil then v = 0 / 0
    elseif type(v) ~= "number" then
      error(fmt("%s: %s[%d] must be a number (got %s)", F, what, i, type(v)), 4)
    end
    out[i] = v
  end
  return out
end

--- Checks the spec and returns a normalised copy:
-- {title, x = {label, unit, log, min, max}, y = {...}, series = {{x, y, label,
-- style, marker, color, dash, index}...}, marks = {{x, y, label}...}}.
function M.normalise(spec, F)
  if type(spec) ~= "table" then
    error(fmt("%s: spec must be a table (got %s)", F, type(spec)), 3)
  end
  local out = { title = spec.title, marks = {}, series = {},
    marks_label = spec.marks_label and text(spec.marks_label) or nil }
  if out.title ~= nil then out.title = text(out.title) end
  for _, a in ipairs { "x", "y" } do
    local s = spec[a] or {}
    if type(s) ~= "table" then error(fmt("%s: spec.%s must be a table", F, a), 3) end
    for _, b in ipairs { "min", "max" } do
      if s[b] ~= nil and not finite(s[b]) then
        error(fmt("%s: spec.%s.%s must be a finite number", F, a, b), 3)
      end
    end
    if s.min and s.max and s.min > s.max then
      error(fmt("%s: spec.%s.min (%s) must not be above spec.%s.max (%s)", F, a,
        numtext.str(s.min), a, numtext.str(s.max)), 3)
    end
    out[a] = { label = s.label and text(s.label) or "", unit = s.unit and text(s.unit) or "",
      log = s.log and true or false, min = s.min, max = s.max }
  end
  local series = spec.series
  if type(series) ~= "table" then
    error(fmt("%s: spec.series must be a list of series", F), 3)
  end
  for i = 1, #series do
    local s = series[i]
    local what = fmt("series %d%s", i,
      type(s) == "table" and s.label and (" ('" .. text(s.label) .. "')") or "")
    if type(s) ~= "table" then error(fmt("%s: %s must be a table", F, what), 3) end
    local style = s.style or "line"
    if not STYLES[style] then
      error(fmt("%s: %s: style must be 'line', 'points' or 'step' (got %s)", F, what,
        numtext.str(style)), 3)
    end
    local xs = read_array(s.x, what .. " x", F)
    local ys
    if callable(s.y) then
      -- y given as a function (or a callable model) of x: evaluated here
      ys = {}
      for k = 1, #xs do
        local ok, v = pcall(s.y, xs[k])
        if not ok then error(fmt("%s: %s: y(x[%d]) failed: %s", F, what, k, numtext.str(v)), 3) end
        ys[k] = type(v) == "number" and v or 0 / 0
      end
    else
      ys = read_array(s.y, what .. " y", F)
    end
    if #xs ~= #ys then
      error(fmt("%s: %s: x has %d values but y has %d", F, what, #xs, #ys), 3)
    end
    local k = #out.series + 1
    local pal = M.PALETTE[(k - 1) % #M.PALETTE + 1]
    out.series[k] = {
      x = xs, y = ys, label = s.label and text(s.label) or nil, style = style,
      marker = s.marker, index = k,
      color = s.color or pal.hex, rgb = pal.rgb,
      dash = s.dash or M.DASHES[(k - 1) % #M.DASHES + 1],
      width = s.width,
    }
  end
  if spec.marks ~= nil then
    if type(spec.marks) ~= "table" then error(fmt("%s: spec.marks must be a list", F), 3) end
    for i, m in ipairs(spec.marks) do
      if type(m) ~= "table" or type(m.x) ~= "number" or type(m.y) ~= "number" then
        error(fmt("%s: marks[%d] must be {x = number, y = number, label = text}", F, i), 3)
      end
      out.marks[#out.marks + 1] = { x = m.x, y = m.y, label = m.label and text(m.label) or nil }
    end
  end
  return out
end

-- A point counts for the range when finite and, on a log axis, positive.
local function usable(v, log) return finite(v) and (not log or v > 0) end

--- Builds both axes from the data (and spec min/max).  Returns xaxis, yaxis.
function M.axes(p, F, opts)
  opts = opts or {}
  local lim = {}
  for _, a in ipairs { "x", "y" } do lim[a] = { lo = math.huge, hi = -math.huge } end
  -- with fixed limits on one axis, the other scales to the visible points
  local function inside(v, a)
    return (p[a].min == nil or v >= p[a].min) and (p[a].max == nil or v <= p[a].max)
  end
  local function take(x, y)
    if usable(x, p.x.log) and usable(y, p.y.log) and inside(x, "x") and inside(y, "y") then
      if x < lim.x.lo then lim.x.lo = x end
      if x > lim.x.hi then lim.x.hi = x end
      if y < lim.y.lo then lim.y.lo = y end
      if y > lim.y.hi then lim.y.hi = y end
    end
  end
  for _, s in ipairs(p.series) do
    for k = 1, #s.x do take(s.x[k], s.y[k]) end
  end
  for _, m in ipairs(p.marks) do take(m.x, m.y) end
  local axes = {}
  for _, a in ipairs { "x", "y" } do
    local spec = p[a]
    local lo, hi = spec.min or lim[a].lo, spec.max or lim[a].hi
    if lo == math.huge or hi == -math.huge or not finite(lo) or not finite(hi) then
      -- nothing to plot: a unit range so the frame still draws
      if spec.log then lo, hi = 1, 10 else lo, hi = 0, 1 end
    end
    if spec.log and (lo <= 0 or hi <= 0) then
      error(fmt("%s: spec.%s.log needs positive limits (got %s .. %s)", F, a, numtext.str(lo),
        numtext.str(hi)), 3)
    end
    axes[a] = axis.new(lo, hi, { log = spec.log, unit = spec.unit,
      n = a == "x" and (opts.nx or 6) or (opts.ny or 6),
      min = spec.min, max = spec.max })
  end
  return axes.x, axes.y
end

--- Clips segment (x0,y0)-(x1,y1) to [0,w]x[0,h] (Liang-Barsky); returns the
-- clipped ends or nil when it misses the box.
function M.clip(x0, y0, x1, y1, w, h)
  local t0, t1 = 0, 1
  local dx, dy = x1 - x0, y1 - y0
  local p = { -dx, dx, -dy, dy }
  local q = { x0, w - x0, y0, h - y0 }
  for i = 1, 4 do
    if p[i] == 0 then
      if q[i] < 0 then return nil end
    else
      local t = q[i] / p[i]
      if p[i] < 0 then
        if t > t1 then return nil end
        if t > t0 then t0 = t end
      else
        if t < t0 then return nil end
        if t < t1 then t1 = t end
      end
    end
  end
  return x0 + t0 * dx, y0 + t0 * dy, x0 + t1 * dx, y0 + t1 * dy
end

--- Runs of consecutive drawable points of a series in plot fractions (0..1,
-- may lie outside when clipped): {{fx1, fy1, fx2, fy2, ...}, ...}.  NaN or
-- (on log axes) non-positive values break a run.  "step" series hold y
-- until the next x.
function M.runs(s, xa, ya)
  local runs, cur = {}, nil
  local py
  for k = 1, #s.x do
    local fx, fy = xa.map(s.x[k]), ya.map(s.y[k])
    if fx and fy then
      if not cur then cur = {}; runs[#runs + 1] = cur
      elseif s.style == "step" then
        cur[#cur + 1] = fx; cur[#cur + 1] = py
      end
      cur[#cur + 1] = fx; cur[#cur + 1] = fy
      py = fy
    else
      cur = nil
    end
  end
  return runs
end

return M
