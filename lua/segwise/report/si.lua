--- segwise.report.si: engineering notation with SI prefixes, and the
-- parser that reads it back (plus part-marking codes such as "4k7").
-- @module segwise.report.si

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local M = {}

local floor, abs, huge = math.floor, math.abs, math.huge
local fmt = numtext.format

local MICRO = "\u{00B5}"      -- micro sign, as printed

-- SI prefixes by power of ten (SI Brochure, BIPM, 9th edition, table 7).
-- Only the engineering steps (powers of 1000) are used for output.
local PREFIX = {
  [-24] = "y", [-21] = "z", [-18] = "a", [-15] = "f", [-12] = "p",
  [-9] = "n", [-6] = MICRO, [-3] = "m", [0] = "", [3] = "k", [6] = "M",
  [9] = "G", [12] = "T", [15] = "P", [18] = "E", [21] = "Z", [24] = "Y",
}
M.PREFIX = PREFIX

-- Prefix letters accepted by parse_si, with their power of ten.
local PARSE_PREFIX = {
  y = -24, z = -21, a = -18, f = -15, p = -12, n = -9, u = -6,
  [MICRO] = -6, ["\u{03BC}"] = -6,     -- micro sign and Greek small mu
  m = -3, k = 3, M = 6, G = 9, T = 12, P = 15, E = 18, Z = 21, Y = 24,
}

local function is_nan(x) return x ~= x end

local function nonfinite_text(v)
  if is_nan(v) then return "NaN" end
  return v > 0 and "inf" or "-inf"
end

local function with_unit(num, prefix, unit)
  if unit == "" and prefix == "" then return num end
  if unit == "" then return num .. prefix end
  return num .. " " .. prefix .. unit
end

local function check_digits(digits, fname)
  digits = digits or 3
  if math.type(digits) ~= "integer"
      and not (type(digits) == "number" and digits == floor(digits)) then
    error(fname .. ": digits must be an integer from 1 to 17 (got " .. numtext.str(digits)
      .. ")", 3)
  end
  if digits < 1 or digits > 17 then
    error(fname .. ": digits must be an integer from 1 to 17 (got " .. numtext.str(digits)
      .. ")", 3)
  end
  return floor(digits)
end

-- Splits |v| rounded to `digits` significant digits into its digit string
-- (no point) and decimal exponent: 0.004315, 3 -> "432", -3.  Rounding is
-- done once, by string.format, so 999.96 becomes "100", 3 (never "1000").
local function round_sig(av, digits)
  -- as a float: abs(math.mininteger) is math.mininteger again
  local s = numtext.number("%." .. (digits - 1) .. "e", abs(av + 0.0))
  local lead, rest, e = s:match("^(%d)%.?(%d*)e([-+]%d+)$")
  return lead .. rest, numtext.tonumber(e)
end

-- Places the decimal point in a digit string `ds` so the first digit has
-- weight 10^shift (shift >= 0), pads with zeros, drops trailing zeros after
-- the point.
local function place_point(ds, shift)
  local int_len = shift + 1
  if #ds < int_len then ds = ds .. string.rep("0", int_len - #ds) end
  local ip, fp = ds:sub(1, int_len), ds:sub(int_len + 1)
  fp = fp:gsub("0+$", "")
  if fp == "" then return ip end
  return ip .. "." .. fp
end

-- Unit symbols a prefix may stand before, to tell "mA" (milliampere,
-- already prefixed) from "Pa" or "mol" (units of their own), and to catch
-- a doubled prefix such as "4.7 kkΩ" (SI Brochure, 9th edition, tables 2-4).
local COMMON_UNIT = { A = true, V = true, W = true, ["\u{03A9}"] = true, ["\u{2126}"] = true,
  F = true, H = true, S = true, Hz = true, s = true, J = true, C = true, K = true, ohm = true,
  Ohm = true, m = true, g = true, N = true, Pa = true, T = true, Wb = true, mol = true,
  cd = true, lm = true, lx = true, Bq = true, Gy = true, Sv = true, L = true, l = true,
  eV = true, Wh = true, Ah = true, VA = true, var = true, bar = true }

-- Units that take no prefix: ratios and levels (common practice; the SI
-- Brochure writes "5 %" with a space, "30°" without one).
local PLAIN_UNIT = { ["%"] = true, ["\u{2030}"] = true, ppm = true, ppb = true, ppt = true,
  ["\u{00B0}C"] = true, ["\u{00B0}F"] = true, ["\u{00B0}"] = true }
local NO_SPACE = { ["\u{00B0}"] = true }

local function first_char(s) return s:match("^[%z\1-\127\194-\244][\128-\191]*") end

-- The leading unit symbol of a compound unit: "mV" of "mV/K", "kW" of "kWh"
-- is "kWh" (letters, micro and ohm signs, up to the first other character).
local function first_factor(u)
  local out, i = {}, 1
  while i <= #u do
    local c = first_char(u:sub(i))
    if not c then break end
    local letter = c:find("^%a$") or c == MICRO or c == "\u{03BC}"
      or c == "\u{03A9}" or c == "\u{2126}"
    if not letter then break end
    out[#out + 1] = c
    i = i + #c
  end
  return table.concat(out)
end

-- True when the unit's first symbol is a prefix on a unit ("mA", "kΩ",
-- "µs", "mV/K"), false for a unit of its own ("Pa", "mol", "T", "m").
local function carries_prefix(u)
  local f = first_factor(u)
  if f == "" or COMMON_UNIT[f] then return false end
  local p = first_char(f)
  return PARSE_PREFIX[p] ~= nil and COMMON_UNIT[f:sub(#p + 1)] == true
end

--- Whether si() puts an SI prefix before `unit`: false for a unit that
-- already carries one ("mA", "kΩ") and for units that take none ("%",
-- "ppm", "dB", "dBm", "°C").  Tables use it to decide a column's prefix.
-- @tparam string unit
-- @treturn boolean
function M.takes_prefix(unit)
  if unit == nil or unit == "" then return true end
  if PLAIN_UNIT[unit] or unit:find("^dB") then return false end
  return not carries_prefix(unit)
end

-- `value` with `digits` significant digits and no prefix: integer digits
-- are never replaced by zeros (1234.5 ppm is "1234 ppm" or "1235 ppm");
-- exponent form below 1e-4 and from 1e15 on, as %g does.
local function plain_number(v, digits)
  local sign = v < 0 and "-" or ""
  local ds, e = round_sig(abs(v), digits)
  if e < -4 or e >= 15 then return sign .. place_point(ds, 0) .. fmt("e%+d", e) end
  if e >= digits - 1 then return fmt("%.0f", v) end
  if e >= 0 then return sign .. place_point(ds, e) end
  local s = ("0." .. string.rep("0", -e - 1) .. ds):gsub("0+$", "")
  return sign .. s
end

--- Engineering notation with an SI prefix.
-- Rule: `digits` significant digits (default 3), rounded once, trailing
-- zeros dropped (si(2200, "Ω") is "2.2 kΩ", si(1000, "A") is "1 kA"), a
-- space between number and prefixed unit, no space when unit is empty
-- (si(4700) is "4.7k").  Zero prints "0 A"; NaN and infinities print "NaN",
-- "inf", "-inf" followed by the unit.  Magnitudes beyond the yocto..yotta
-- prefixes fall back to exponent notation ("1.5e-27 A").  Rounding is C's
-- printf rounding of the binary value (an exact half such as 12.5 to two
-- digits goes to even: "12").  Micro prints as the micro sign U+00B5.
-- A unit that already carries a prefix ("mA", "kΩ", "µs") and the units
-- that take none ("%", "ppm", "dB...", "°C") print the number as given,
-- unscaled: si(0.002, "mA") is "0.002 mA", si(0.05, "%") is "0.05 %".
-- @tparam number value
-- @tparam[opt=""] string unit
-- @tparam[opt=3] integer digits significant digits, 1..17
-- @treturn string
function M.si(value, unit, digits)
  if type(value) ~= "number" then
    error("segwise.si: value must be a number (got " .. type(value) .. ")", 2)
  end
  unit = unit or ""
  if type(unit) ~= "string" then
    error("segwise.si: unit must be a string (got " .. type(unit) .. ")", 2)
  end
  digits = check_digits(digits, "segwise.si")
  if value ~= value or value == huge or value == -huge then
    return with_unit(nonfinite_text(value), "", unit)
  end
  if value == 0 then return with_unit("0", "", unit) end
  if not M.takes_prefix(unit) then
    local num = plain_number(value, digits)
    return NO_SPACE[unit] and num .. unit or num .. " " .. unit
  end
  local sign = value < 0 and "-" or ""
  local ds, e = round_sig(abs(value), digits)
  local e3 = floor(e / 3) * 3
  local prefix = PREFIX[e3]
  if not prefix then
    local m = place_point(ds, 0)
    return with_unit(sign .. m .. fmt("e%+d", e), "", unit)
  end
  return with_unit(sign .. place_point(ds, e - e3), prefix, unit)
end

--- The mantissa of `value` in the engineering step `e3` (a multiple of 3),
-- with `digits` significant digits, trailing zeros dropped.  Used by tables
-- that print a whole column in one prefix.
function M.si_in(value, e3, digits)
  digits = digits or 3
  if value ~= value or value == huge or value == -huge then return nonfinite_text(value) end
  if value == 0 then return "0" end
  local sign = value < 0 and "-" or ""
  local ds, e = round_sig(abs(value), digits)
  if e >= e3 then return sign .. place_point(ds, e - e3) end
  -- smaller than the step: leading zeros after the point
  local s = "0." .. string.rep("0", e3 - e - 1) .. ds
  s = s:gsub("0+$", ""):gsub("%.$", "")
  return sign .. s
end

--- The engineering exponent (multiple of 3 with a prefix) for `value` once
-- rounded to `digits` significant digits; nil for 0, NaN and infinities.
function M.si_step(value, digits)
  if type(value) ~= "number" or value ~= value or value == 0
     or value == huge or value == -huge then return nil end
  local _, e = round_sig(abs(value), digits or 3)
  local e3 = floor(e / 3) * 3
  if e3 < -24 then e3 = -24 elseif e3 > 24 then e3 = 24 end
  return e3
end

local function trim(s) return (s:gsub("^%s+", ""):gsub("%s+$", "")) end

-- True when unit text is a prefix followed by a common unit ("kΩ", "mA").
local function has_prefix(u)
  local first = first_char(u)
  return first ~= nil and PARSE_PREFIX[first] ~= nil and COMMON_UNIT[u:sub(#first + 1)] == true
end

-- Reads the unit part after a number: optional SI prefix, then a unit
-- without spaces.  Returns power of ten and unit, or nil.
local function read_suffix(rest, unit_hint)
  if rest == "" then return 0, "" end
  if unit_hint and unit_hint ~= "" then
    -- strip the expected unit first so "5 Pa" with unit "Pa" is not peta-a
    if rest == unit_hint then return 0, unit_hint end
    if rest:sub(-#unit_hint) == unit_hint then
      local p = rest:sub(1, -#unit_hint - 1)
      if PARSE_PREFIX[p] then return PARSE_PREFIX[p], unit_hint end
      return nil
    end
  end
  if rest:find("%s") or rest:find("^[%d%.+-]") or rest:find("^e[+-]?%d*$") then return nil end
  local e, u = 0, rest
  local first = first_char(rest)
  if first and PARSE_PREFIX[first] then e, u = PARSE_PREFIX[first], rest:sub(#first + 1) end
  if u:find("[%d]") or has_prefix(u) then return nil end
  return e, u
end

-- Letters allowed in place of the decimal point in part markings ("4k7",
-- "2R2", "R47", "4M7"): common practice for resistor and capacitor values.
local INFIX = { R = 0, r = 0, k = 3, K = 3, M = 6, G = 9, m = -3, u = -6,
  [MICRO] = -6, ["\u{03BC}"] = -6, n = -9, p = -12 }

-- SI has one symbol for mega, M; a unit text starting with the letters
-- m-e-g in any case is that other suffix, and would be milli plus "eg".
local function refuse_meg(text, tail)
  local w = tail:sub(1, 3)
  if w:lower() == "meg" then
    error(fmt("segwise.parse_si: cannot read %q: the suffix %q is not a prefix;"
      .. " write M for mega (M is mega, m is milli)", text, w), 3)
  end
end

--- Reads a number with an optional SI prefix and unit.
-- Accepts "4.7k", "4.7 kΩ", "10 mA", "1e-3", "4k7", "2R2", "R47", "4u7",
-- "u"/"µ"/"μ" for micro, "M" for mega and "m" for milli (case-sensitive,
-- as SI writes them; the three-letter mega suffix of some programs is
-- refused with a message saying to write M),
-- "NaN", "inf", "-inf".  The first letter after the number is read as a
-- prefix when it is one ("1 m" is 1e-3); pass `unit` to strip an expected
-- unit first ("5 Pa" with unit "Pa" is 5).  Numbers pass through.
-- @tparam string|number text
-- @tparam[opt] string unit expected unit
-- @treturn number value
-- @treturn string the unit text that followed (may be "")
-- @raise when the text is not a number, naming the text
function M.parse_si(text, unit)
  if type(text) == "number" then return text, "" end
  if type(text) ~= "string" then
    error("segwise.parse_si: expected a string (got " .. type(text) .. ")", 2)
  end
  local s = trim(text)
  local function bad()
    error(fmt("segwise.parse_si: cannot read %q as a number with an SI prefix", text), 3)
  end
  -- NaN / infinities, as si() prints them
  local sign, word, rest = s:match("^([+-]?)(%a+)%s*(.-)$")
  if word then
    local lw = word:lower()
    if lw == "nan" or lw == "inf" or lw == "infinity" then
      local _, u = read_suffix(rest, unit)
      if u == nil or (rest ~= "" and read_suffix(rest, unit) ~= 0) then bad() end
      if lw == "nan" then return 0 / 0, u end
      return (sign == "-" and -huge or huge), u
    end
  end
  -- part-marking style: digits, prefix letter in place of the point, digits
  do
    local sg, ip, letter, fp, tail =
      s:match("^([+-]?)(%d*)([%a\194-\244][\128-\191]*)(%d*)%s*(.-)$")
    local tf = tail and first_char(tail)
    if sg and INFIX[letter] and fp ~= ""
       and not tail:find("^[%d%.]") and not tail:find("%s")
       and not (tf and PARSE_PREFIX[tf]) then
      -- scaled through the decimal string: one rounding, 4k7 == 4700 exactly
      local v = numtext.tonumber((ip == "" and "0" or ip) .. "." .. fp .. "e" .. INFIX[letter])
      if v then return (sg == "-" and -v or v), tail end
    end
  end
  -- plain number, then optional space, prefix and unit
  local num, tail = s:match("^([+-]?%d*%.?%d*[eE][+-]?%d+)%s*(.-)$")
  if not num or not numtext.tonumber(num) then
    num, tail = s:match("^([+-]?%d*%.?%d*)%s*(.-)$")
  end
  local v = num and numtext.tonumber(num)
  if not v then bad() end
  refuse_meg(text, tail)
  local e, u = read_suffix(tail, unit)
  if not e then bad() end
  if e ~= 0 then
    -- one rounding: scale by an exact power of ten through the decimal string
    local scaled = numtext.tonumber(num .. "e" .. e)
    if not scaled then
      local m, x = num:match("^(.-)[eE]([+-]?%d+)$")
      scaled = numtext.tonumber(m .. "e" .. (numtext.tonumber(x) + e))
    end
    v = scaled or v * 10.0 ^ e
  end
  return v, u
end

M.nonfinite_text = nonfinite_text

return M
