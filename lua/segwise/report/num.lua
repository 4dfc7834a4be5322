--- segwise.report.num: numbers as text with '.' as the decimal point in
-- every locale.  Lua's string.format, tostring and `..` print numbers through
-- C's printf, which follows LC_NUMERIC: after os.setlocale("de_DE.UTF-8",
-- "numeric") (a host application may do that) they write "0,5", and
-- tonumber reads "0,5" too.  Files, plots and tables must not change with
-- the host's locale, so report and plot code format numbers here.
--
-- How: format as Lua does, then turn the locale's point back into '.'.  The
-- point is found from the text printf gives for 0.5, each call (a host may
-- switch locales between calls); in the C locale the text goes out as is.
-- @module segwise.report.num

local M = {}
local sfmt, mtype = string.format, math.type

--- The decimal point printf uses now ("." in the C locale, "," in many).
function M.point() return (sfmt("%.1f", 0.5):sub(2, -2)) end

-- The point in numeric text printed by %e/%f/%g/%a: any run of bytes that
-- is no digit, letter (exponent, inf, nan, hex), sign or padding blank.  printf never
-- groups digits for these conversions, so nothing else can be there.
local function fix(s) return (s:gsub("[^0-9a-zA-Z+%- ]+", ".")) end

-- Conversions whose text carries a decimal point.
local FLOATS = { e = true, E = true, f = true, F = true, g = true, G = true, a = true, A = true }

--- string.format with '.' as the decimal point whatever the locale.
-- Numeric conversions (%e %f %g %a) are fixed one by one, so commas in the
-- format's own text or in %s arguments stay as they are.
function M.format(f, ...)
  if M.point() == "." then return sfmt(f, ...) end
  local args, n, out, i, ai = { ... }, select("#", ...), {}, 1, 0
  while true do
    local s, e = f:find("%%[-+ #0]*%d*%.?%d*[a-zA-Z%%]", i)
    if not s then out[#out + 1] = f:sub(i); break end
    out[#out + 1] = f:sub(i, s - 1)
    local spec = f:sub(s, e)
    local conv = spec:sub(-1)
    if conv == "%" then out[#out + 1] = "%"
    else
      ai = ai + 1
      if ai > n then return sfmt(f, ...) end -- Lua's own error for missing arguments
      local t = sfmt(spec, args[ai])
      if FLOATS[conv] then t = fix(t)
      elseif conv == "s" and type(args[ai]) == "number" then t = sfmt(spec, M.str(args[ai])) end
      out[#out + 1] = t
    end
    i = e + 1
  end
  return table.concat(out)
end

--- One numeric conversion (spec such as "%.2f") of v, with a '.' point: the
-- cheap form for hot loops (SVG coordinates).
function M.number(spec, v)
  local s = sfmt(spec, v)
  if s:find("[^0-9a-zA-Z+%- .]") then s = fix(s) end
  return s
end

--- tostring with '.' as the decimal point (other values as tostring gives
-- them; integers never carry a point; %q is locale-free in Lua already).
function M.str(v)
  local s = tostring(v)
  if mtype(v) == "float" and M.point() ~= "." then s = fix(s) end
  return s
end

--- tonumber for numeric text written with '.' (as files and SI text are),
-- in any locale: "0,5" is not a number here even where the locale says so,
-- and no length limit applies (Lua's own fallback stops at 200 bytes).
function M.tonumber(s)
  if type(s) ~= "string" then return tonumber(s) end
  if s:find("[^0-9a-zA-Z+%-%.%s]") then return nil end
  local p = M.point()
  if p == "." or not s:find(".", 1, true) then return tonumber(s) end
  return tonumber((s:gsub("%.", p)))
end

return M
