--- segwise.report: SI formatting, tables (text, CSV, markdown) and
-- ready-made reports for fits, operating points and fit comparisons.
-- No numerics live here: the numbers come from the C core, this module only
-- lays them out.
-- @module segwise.report

local M = {}

local floor, abs, huge = math.floor, math.abs, math.huge
local fmt = string.format
local concat = table.concat

local MICRO = "\u{00B5}"      -- micro sign, as printed
local DASH = "\u{2014}"       -- em dash: "no value" in a cell

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
  if math.type(digits) ~= "integer" and not (type(digits) == "number" and digits == floor(digits)) then
    error(fname .. ": digits must be an integer from 1 to 17 (got " .. tostring(digits) .. ")", 3)
  end
  if digits < 1 or digits > 17 then
    error(fname .. ": digits must be an integer from 1 to 17 (got " .. tostring(digits) .. ")", 3)
  end
  return floor(digits)
end

-- Splits |v| rounded to `digits` significant digits into its digit string
-- (no point) and decimal exponent: 0.004315, 3 -> "432", -3.  Rounding is
-- done once, by string.format, so 999.96 becomes "100", 3 (never "1000").
local function round_sig(av, digits)
  local s = fmt("%." .. (digits - 1) .. "e", av)
  local lead, rest, e = s:match("^(%d)%.?(%d*)e([-+]%d+)$")
  return lead .. rest, tonumber(e)
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

--- Engineering notation with an SI prefix.
-- Rule: `digits` significant digits (default 3), rounded once, trailing
-- zeros dropped (si(2200, "Ω") is "2.2 kΩ", si(1000, "A") is "1 kA"), a
-- space between number and prefixed unit, no space when unit is empty
-- (si(4700) is "4.7k").  Zero prints "0 A"; NaN and infinities print "NaN",
-- "inf", "-inf" followed by the unit.  Magnitudes beyond the yocto..yotta
-- prefixes fall back to exponent notation ("1.5e-27 A").
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

local function first_char(s) return s:match("^[%z\1-\127\194-\244][\128-\191]*") end

-- Common unit symbols, to catch a doubled prefix such as "4.7 kkΩ".
local COMMON_UNIT = { A = true, V = true, W = true, ["\u{03A9}"] = true, F = true, H = true,
  S = true, Hz = true, s = true, J = true, C = true, K = true, ohm = true, Ohm = true }

-- True when unit text is a prefix followed by a common unit ("kΩ", "mA").
local function has_prefix(u)
  local first = first_char(u)
  if u:sub(1, 3):lower() == "meg" then return true end
  return first ~= nil and PARSE_PREFIX[first] ~= nil and COMMON_UNIT[u:sub(#first + 1)] == true
end

-- Reads the unit part after a number: optional SI prefix (or "meg"), then a
-- unit without spaces.  Returns power of ten and unit, or nil.
local function read_suffix(rest, unit_hint)
  if rest == "" then return 0, "" end
  if unit_hint and unit_hint ~= "" then
    -- strip the expected unit first so "5 Pa" with unit "Pa" is not peta-a
    if rest == unit_hint then return 0, unit_hint end
    if rest:sub(-#unit_hint) == unit_hint then
      local p = rest:sub(1, -#unit_hint - 1)
      if p:lower() == "meg" then return 6, unit_hint end
      if PARSE_PREFIX[p] then return PARSE_PREFIX[p], unit_hint end
      return nil
    end
  end
  if rest:find("%s") or rest:find("^[%d%.+-]") or rest:find("^e[+-]?%d*$") then return nil end
  local e, u = 0, rest
  if rest:sub(1, 3):lower() == "meg" then e, u = 6, rest:sub(4)
  else
    local first = first_char(rest)
    if first and PARSE_PREFIX[first] then e, u = PARSE_PREFIX[first], rest:sub(#first + 1) end
  end
  if u:find("[%d]") or has_prefix(u) then return nil end
  return e, u
end

-- Letters allowed in place of the decimal point in part markings ("4k7",
-- "2R2", "R47", "4M7"): common practice for resistor and capacitor values.
local INFIX = { R = 0, r = 0, k = 3, K = 3, M = 6, G = 9, m = -3, u = -6,
  [MICRO] = -6, ["\u{03BC}"] = -6, n = -9, p = -12 }

--- Reads a number with an optional SI prefix and unit.
-- Accepts "4.7k", "4.7 kΩ", "10 mA", "1e-3", "4k7", "2R2", "R47", "4u7",
-- "u"/"µ"/"μ" for micro, "meg"/"MEG" or "M" for mega ("m" is milli),
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
    local sg, ip, letter, fp, tail = s:match("^([+-]?)(%d*)([%a\194-\244][\128-\191]*)(%d*)%s*(.-)$")
    local tf = tail and first_char(tail)
    if sg and INFIX[letter] and fp ~= ""
       and not tail:find("^[%d%.]") and not tail:find("%s")
       and not (tf and (PARSE_PREFIX[tf] or tail:sub(1, 3):lower() == "meg")) then
      -- scaled through the decimal string: one rounding, 4k7 == 4700 exactly
      local v = tonumber((ip == "" and "0" or ip) .. "." .. fp .. "e" .. INFIX[letter])
      if v then return (sg == "-" and -v or v), tail end
    end
  end
  -- plain number, then optional space, prefix and unit
  local num, tail = s:match("^([+-]?%d*%.?%d*[eE][+-]?%d+)%s*(.-)$")
  if not num or not tonumber(num) then
    num, tail = s:match("^([+-]?%d*%.?%d*)%s*(.-)$")
  end
  local v = num and tonumber(num)
  if not v then bad() end
  local e, u = read_suffix(tail, unit)
  if not e then bad() end
  if e ~= 0 then
    -- one rounding: scale by an exact power of ten through the decimal string
    local scaled = tonumber(num .. "e" .. e)
    if not scaled then
      local m, x = num:match("^(.-)[eE]([+-]?%d+)$")
      scaled = tonumber(m .. "e" .. (tonumber(x) + e))
    end
    v = scaled or v * 10.0 ^ e
  end
  return v, u
end

----------------------------------------------------------------------------
-- Writing output: a path is written to "<path>.tmp" then renamed, so an error
-- never leaves a truncated file; a handle is written as is.

--- Writes string `s` to `out` (a path or anything with :write).
function M.write(out, s, fname)
  fname = fname or "segwise.report"
  if out == nil then return s end
  if type(out) == "string" then
    local tmp = out .. ".tmp"
    local f, err = io.open(tmp, "wb")
    if not f then error(fname .. ": cannot write '" .. out .. "': " .. tostring(err), 3) end
    local ok, werr = f:write(s)
    local cok, cerr = f:close()
    if not ok or not cok then
      os.remove(tmp)
      error(fname .. ": cannot write '" .. out .. "': " .. tostring(werr or cerr), 3)
    end
    local rok, rerr = os.rename(tmp, out)
    if not rok then
      os.remove(tmp)
      error(fname .. ": cannot rename '" .. tmp .. "' to '" .. out .. "': " .. tostring(rerr), 3)
    end
    return s
  end
  local ok = pcall(function() assert(out:write(s)) end)
  if not ok then error(fname .. ": out must be a file path or an open file handle", 3) end
  return s
end

----------------------------------------------------------------------------
-- Tables

local function ulen(s)
  return utf8.len(s) or #s
end

local function pad(s, w, align)
  local n = w - ulen(s)
  if n <= 0 then return s end
  if align == "left" then return s .. string.rep(" ", n) end
  if align == "center" then
    local l = n // 2
    return string.rep(" ", l) .. s .. string.rep(" ", n - l)
  end
  return string.rep(" ", n) .. s
end

-- Normalises one column spec.
local function norm_column(c, i)
  if type(c) == "string" then return { name = c, key = c } end
  if type(c) ~= "table" then
    error(fmt("segwise.report.table: column %d must be a name or a table (got %s)", i, type(c)), 3)
  end
  local name = c.name or c.key or c[1]
  if type(name) ~= "string" then
    error(fmt("segwise.report.table: column %d needs a name", i), 3)
  end
  if c.fmt ~= nil and type(c.fmt) ~= "string" and type(c.fmt) ~= "function" then
    error(fmt("segwise.report.table: column '%s': fmt must be a format string or a function", name), 3)
  end
  if c.fn ~= nil and type(c.fn) ~= "function" then
    error(fmt("segwise.report.table: column '%s': fn must be a function of the row", name), 3)
  end
  if c.align ~= nil and c.align ~= "left" and c.align ~= "right" and c.align ~= "center" then
    error(fmt("segwise.report.table: column '%s': align must be 'left', 'right' or 'center'", name), 3)
  end
  if c.unit ~= nil and type(c.unit) ~= "string" then
    error(fmt("segwise.report.table: column '%s': unit must be a string", name), 3)
  end
  return { name = name, key = c.key or c[2] or name, unit = c.unit, fmt = c.fmt,
    fn = c.fn, align = c.align, digits = c.digits, scale = c.scale, si = c.si }
end

local function cell_value(col, row, r)
  if col.fn then
    local ok, v = pcall(col.fn, row)
    if not ok then
      error(fmt("segwise.report.table: column '%s', row %d: %s", col.name, r, tostring(v)), 4)
    end
    return v
  end
  return row[col.key]
end

local function plain_number(v, digits)
  if v ~= v or v == huge or v == -huge then return nonfinite_text(v) end
  if math.type(v) == "integer" then return tostring(v) end
  if v == floor(v) and abs(v) < 1e15 then return fmt("%d", v) end
  local s = fmt("%." .. digits .. "g", v)
  return s
end

local function apply_fmt(col, v, r)
  if type(col.fmt) == "function" then
    local ok, s = pcall(col.fmt, v)
    if not ok then
      error(fmt("segwise.report.table: column '%s', row %d: fmt failed: %s", col.name, r, tostring(s)), 5)
    end
    return tostring(s)
  end
  if type(v) == "number" and (v ~= v or v == huge or v == -huge) and not col.fmt:find("%%[%d.]*[sq]") then
    return nonfinite_text(v)
  end
  local ok, s = pcall(fmt, col.fmt, v)
  if not ok then
    error(fmt("segwise.report.table: column '%s', row %d: format %q does not fit value %s",
      col.name, r, col.fmt, tostring(v)), 5)
  end
  return s
end

-- Builds the header and cell strings for the human formats (text, markdown).
-- Rule for units: a column with `unit` and no `fmt` prints every value as a
-- mantissa in ONE SI prefix for the whole column, chosen from the largest
-- magnitude, and the header carries it: "I (mA)".  With `fmt`, the header is
-- "I (A)" and values are in the base unit.  opts.units = "cells" instead
-- prints each value with its own prefix and unit ("4.31 mA"), header "I".
local function human_cells(rows, cols, opts)
  local digits = opts.digits or 3
  local header, cells, aligns = {}, {}, {}
  for r = 1, #rows do cells[r] = {} end
  for j, col in ipairs(cols) do
    local vals, numeric = {}, true
    for r, row in ipairs(rows) do
      local v = cell_value(col, row, r)
      if type(v) == "number" and col.scale then v = v * col.scale end
      vals[r] = v
      if v ~= nil and type(v) ~= "number" then numeric = false end
    end
    local d = col.digits or digits
    local e3
    if col.unit and not col.fmt and opts.units ~= "cells" and (col.si == false or col.unit == "%") then
      e3 = 0
    elseif col.unit and not col.fmt and opts.units ~= "cells" then
      local maxabs
      for r = 1, #rows do
        local v = vals[r]
        if type(v) == "number" and v == v and abs(v) ~= huge and v ~= 0
           and (not maxabs or abs(v) > maxabs) then maxabs = abs(v) end
      end
      e3 = maxabs and M.si_step(maxabs, d) or 0
    end
    if col.unit and col.unit ~= "" and (opts.units ~= "cells" or col.fmt) then
      local pre = (e3 and PREFIX[e3]) or ""
      header[j] = fmt("%s (%s%s)", col.name, pre, col.unit)
    elseif col.unit and col.unit == "" and e3 and e3 ~= 0 then
      header[j] = fmt("%s (%s)", col.name, PREFIX[e3])
    else
      header[j] = col.name
    end
    for r = 1, #rows do
      local v, s = vals[r], nil
      if v == nil then
        s = opts.empty or ""
      elseif col.fmt then
        s = apply_fmt(col, v, r)
      elseif type(v) == "number" then
        if col.unit and opts.units == "cells" and col.si ~= false and col.unit ~= "%" then
          s = M.si(v, col.unit, d)
        elseif col.unit and opts.units == "cells" then
          s = M.si_in(v, 0, d) .. " " .. col.unit
        elseif col.unit then s = M.si_in(v, e3, d)
        else s = plain_number(v, math.max(d, 4)) end
      else
        s = tostring(v)
      end
      cells[r][j] = s
    end
    aligns[j] = col.align or (numeric and "right" or "left")
  end
  return header, cells, aligns
end

local function render_text(rows, cols, opts)
  local header, cells, aligns = human_cells(rows, cols, opts)
  local widths = {}
  for j = 1, #cols do
    local w = ulen(header[j])
    for r = 1, #cells do w = math.max(w, ulen(cells[r][j])) end
    widths[j] = w
  end
  local sep = opts.sep or "  "
  local lines = {}
  if opts.title then lines[#lines + 1] = opts.title end
  local h, rule = {}, {}
  for j = 1, #cols do
    h[j] = pad(header[j], widths[j], aligns[j])
    rule[j] = string.rep("\u{2500}", widths[j])
  end
  lines[#lines + 1] = (concat(h, sep):gsub("%s+$", ""))
  lines[#lines + 1] = concat(rule, sep)
  for r = 1, #cells do
    local l = {}
    for j = 1, #cols do l[j] = pad(cells[r][j], widths[j], aligns[j]) end
    lines[#lines + 1] = (concat(l, sep):gsub("%s+$", ""))
  end
  return concat(lines, "\n") .. "\n"
end

local function md_escape(s)
  return (s:gsub("\\", "\\\\"):gsub("|", "\\|"):gsub("\r?\n", "<br>"))
end

local function render_markdown(rows, cols, opts)
  local header, cells, aligns = human_cells(rows, cols, opts)
  local widths = {}
  for j = 1, #cols do
    header[j] = md_escape(header[j])
    local w = math.max(3, ulen(header[j]))
    for r = 1, #cells do
      cells[r][j] = md_escape(cells[r][j])
      w = math.max(w, ulen(cells[r][j]))
    end
    widths[j] = w
  end
  local lines = {}
  if opts.title then lines[#lines + 1] = "**" .. md_escape(opts.title) .. "**"; lines[#lines + 1] = "" end
  local h, rule = {}, {}
  for j = 1, #cols do
    h[j] = pad(header[j], widths[j], aligns[j] == "right" and "right" or "left")
    local dashes = string.rep("-", widths[j] - 1)
    if aligns[j] == "right" then rule[j] = dashes .. ":"
    elseif aligns[j] == "center" then rule[j] = ":" .. string.rep("-", widths[j] - 2) .. ":"
    else rule[j] = ":" .. dashes end
  end
  lines[#lines + 1] = "| " .. concat(h, " | ") .. " |"
  lines[#lines + 1] = "| " .. concat(rule, " | ") .. " |"
  for r = 1, #cells do
    local l = {}
    for j = 1, #cols do l[j] = pad(cells[r][j], widths[j], aligns[j] == "right" and "right" or "left") end
    lines[#lines + 1] = "| " .. concat(l, " | ") .. " |"
  end
  return concat(lines, "\n") .. "\n"
end

-- RFC 4180: a field holding a comma, quote, CR or LF is quoted and its
-- quotes doubled.  Leading/trailing spaces are quoted too, so no reader
-- trims them away.
local function csv_field(s)
  if s:find('[,"\r\n]') or s:find("^%s") or s:find("%s$") then
    return '"' .. s:gsub('"', '""') .. '"'
  end
  return s
end

local function render_csv(rows, cols, opts)
  local numfmt = opts.full and "%.17g" or (opts.numfmt or "%.6g")
  local eol = opts.eol or "\n"
  local lines = {}
  local h = {}
  for j, col in ipairs(cols) do
    local name = col.name
    if col.unit and col.unit ~= "" then name = fmt("%s (%s)", name, col.unit) end
    h[j] = csv_field(name)
  end
  lines[1] = concat(h, ",")
  for r, row in ipairs(rows) do
    local l = {}
    for j, col in ipairs(cols) do
      local v = cell_value(col, row, r)
      if type(v) == "number" and col.scale then v = v * col.scale end
      local s
      if v == nil then s = ""
      elseif type(v) == "number" then
        if v ~= v or v == huge or v == -huge then s = nonfinite_text(v)
        elseif math.type(v) == "integer" then s = tostring(v)
        else s = fmt(numfmt, v) end
      elseif type(col.fmt) == "function" then s = apply_fmt(col, v, r)
      else s = tostring(v) end
      l[j] = csv_field(s)
    end
    lines[#lines + 1] = concat(l, ",")
  end
  return concat(lines, eol) .. eol
end

local RENDER = { text = render_text, csv = render_csv, markdown = render_markdown, md = render_markdown }

--- Formats rows as a table.
-- @tparam {table,...} rows list of row tables
-- @tparam {string|table,...} columns names, or {name=, key=, unit=, fmt=, fn=, align=, digits=, scale=}
-- @tparam[opt] table opts {format = "text"|"csv"|"markdown", out = path or handle,
--   digits = 3, units = "header"|"cells", full = false (CSV %.17g), numfmt = "%.6g",
--   title = string, eol = "\n" (CSV), empty = "" (text for nil cells)}
-- @treturn string the table
function M.table(rows, columns, opts)
  opts = opts or {}
  if type(rows) ~= "table" then
    error("segwise.report.table: rows must be a list of tables (got " .. type(rows) .. ")", 2)
  end
  for r = 1, #rows do
    if type(rows[r]) ~= "table" then
      error(fmt("segwise.report.table: row %d must be a table (got %s)", r, type(rows[r])), 2)
    end
  end
  if type(columns) ~= "table" or #columns == 0 then
    error("segwise.report.table: columns must be a non-empty list", 2)
  end
  if type(opts) ~= "table" then error("segwise.report.table: opts must be a table", 2) end
  local cols = {}
  for i, c in ipairs(columns) do cols[i] = norm_column(c, i) end
  local format = opts.format or "text"
  local render = RENDER[format]
  if not render then
    error("segwise.report.table: format must be 'text', 'csv' or 'markdown' (got " .. tostring(format) .. ")", 2)
  end
  local s = render(rows, cols, opts)
  return M.write(opts.out, s, "segwise.report.table")
end

----------------------------------------------------------------------------
-- Ready-made reports

-- Unit of y/x, with the usual names for V/A and A/V.
local function ratio_unit(yu, xu)
  if yu == "" and xu == "" then return "" end
  if yu == "V" and xu == "A" then return "\u{03A9}" end
  if yu == "A" and xu == "V" then return "S" end
  if xu == "" then return yu end
  if yu == "" then return "1/" .. xu end
  return yu .. "/" .. xu
end
M.ratio_unit = ratio_unit

local function units_of(opts)
  local u = opts.units or opts
  return u.x or "", u.y or ""
end

local function human(v, unit, digits)
  if type(v) ~= "number" then return DASH end
  return M.si(v, unit, digits)
end

-- Joins blocks; the final result goes through write().
local function finish(parts, opts, fname)
  local s = concat(parts, "\n")
  return M.write(opts.out, s, fname)
end

local function method_or_fail(obj, name, fname, what)
  if type(obj) ~= "table" and type(obj) ~= "userdata" then
    error(fmt("%s: %s must be a model (got %s)", fname, what, type(obj)), 3)
  end
  local ok, f = pcall(function() return obj[name] end)
  if not ok or type(f) ~= "function" then
    error(fmt("%s: %s has no method '%s'", fname, what, name), 3)
  end
end

--- Fit report: a summary of how the model was made and its errors, then one
-- row per segment: range, slope, intercept, Thevenin e/r, Norton j/g (a
-- dash where the segment is flat and has no Norton form), and the
-- segment's max error and where.
-- @param model a PWL model (nseg, seg, thevenin, norton, fit_info, knots)
-- @tparam[opt] table opts {x = "A", y = "V", format =, out =, digits =}
-- @treturn string
function M.fit_table(model, opts)
  opts = opts or {}
  local F = "segwise.report.fit_table"
  for _, m in ipairs { "nseg", "seg", "thevenin", "norton" } do method_or_fail(model, m, F, "model") end
  local xu, yu = units_of(opts)
  local su, gu = ratio_unit(yu, xu), ratio_unit(xu, yu)
  local info
  if type(model.fit_info) == "function" then info = model:fit_info() end
  local per = info and info.per_segment or {}
  local rows = {}
  for k = 1, model:nseg() do
    local s = model:seg(k)
    local row = { k = k, lo = s.lo or s[1], hi = s.hi or s[2],
      slope = s.slope or s[3], intercept = s.intercept or s[4] }
    local ok, e, r = pcall(model.thevenin, model, k)
    if ok then row.e, row.r = e, r end
    local okn, j, g = pcall(model.norton, model, k)
    if okn then row.j, row.g = j, g end
    local p = per[k]
    if p then row.max_abs, row.x_err, row.max_rel = p.max_abs, p.x, p.max_rel end
    rows[k] = row
  end
  local cols = {
    { name = "seg", key = "k" },
    { name = "from", key = "lo", unit = xu },
    { name = "to", key = "hi", unit = xu },
    { name = "slope", key = "slope", unit = su },
    { name = "intercept", key = "intercept", unit = yu },
    { name = "e", key = "e", unit = yu },
    { name = "r", key = "r", unit = su },
    { name = "j", key = "j", unit = xu },
    { name = "g", key = "g", unit = gu },
  }
  if info and info.per_segment then
    cols[#cols + 1] = { name = "max err", key = "max_abs", unit = yu }
    cols[#cols + 1] = { name = "at", key = "x_err", unit = xu }
    cols[#cols + 1] = { name = "max rel", key = "max_rel", unit = "%", scale = 100 }
  end
  local format = opts.format or "text"
  local topts = { format = format, digits = opts.digits, units = opts.cell_units,
    empty = (format == "csv") and "" or DASH, full = opts.full }
  -- CSV keeps raw numbers; the percent column is then a fraction
  if format == "csv" then
    cols[#cols] = cols[#cols] and cols[#cols].key == "max_rel"
      and { name = "max rel (fraction)", key = "max_rel" } or cols[#cols]
  end
  local tbl = M.table(rows, cols, topts)
  if format == "csv" then return M.write(opts.out, tbl, F) end
  local parts = {}
  local d = opts.digits
  local head = {}
  head[#head + 1] = fmt("PWL model: %d segment%s", model:nseg(), model:nseg() == 1 and "" or "s")
  if type(model.knots) == "function" then
    local xs = model:knots()
    if type(xs) == "table" or type(xs) == "userdata" then
      local kn = {}
      for i = 1, #xs do kn[i] = human(xs[i], xu, d) end
      head[#head + 1] = "knots: " .. concat(kn, ", ")
    end
  end
  if info then
    head[#head + 1] = fmt("fit: %s, %s error%s", tostring(info.criterion or "?"),
      tostring(info.error or "?"),
      info.segments and fmt(", segments %s", tostring(info.segments)) or "")
    local e = {}
    if info.max_abs then e[#e + 1] = "max abs " .. human(info.max_abs, yu, d) .. " at " .. human(info.x_abs, xu, d) end
    if info.max_rel then e[#e + 1] = "max rel " .. M.si_in(info.max_rel * 100, 0, d or 3) .. " % at " .. human(info.x_rel, xu, d) end
    if info.rms then e[#e + 1] = "rms " .. human(info.rms, yu, d) end
    if #e > 0 then head[#head + 1] = "error: " .. concat(e, ", ") end
  end
  if format == "markdown" then
    for i = 1, #head do head[i] = "- " .. md_escape(head[i]) end
  end
  parts[1] = concat(head, "\n") .. "\n"
  parts[2] = tbl
  if format ~= "markdown" then
    parts[3] = fmt("y = e + r*x (Thevenin), x = j + g*y (Norton); %s: flat segment, no Norton form\n", DASH)
  end
  return finish(parts, opts, F)
end

local function sorted_keys(...)
  local seen, keys = {}, {}
  for _, t in ipairs { ... } do
    if type(t) == "table" then
      for k in pairs(t) do
        if not seen[k] then seen[k] = true; keys[#keys + 1] = k end
      end
    end
  end
  table.sort(keys, function(a, b)
    local na, nb = tonumber(a), tonumber(b)
    if na and nb then return na < nb end
    if na then return true end
    if nb then return false end
    return tostring(a) < tostring(b)
  end)
  return keys
end

--- Operating-point report: node voltages, then each element's current,
-- power and state (and voltage, when op.vd[name] is given), then warnings.
-- The reference node ("0" or "gnd") is left out unless opts.ground.
-- @tparam table op {v = {[node] = volts}, i = {[name] = amps}, p = {[name] = watts},
--   state = {[name] = segment}, warnings = {string...}, vd = {[name] = volts}?}
-- @tparam[opt] table opts {format =, out =, digits =}
-- @treturn string
function M.op_table(op, opts)
  opts = opts or {}
  local F = "segwise.report.op_table"
  if type(op) ~= "table" and type(op) ~= "userdata" then
    error(F .. ": op must be an operating point (got " .. type(op) .. ")", 2)
  end
  local format = opts.format or "text"
  local topts = { format = format, digits = opts.digits, empty = format == "csv" and "" or DASH,
    full = opts.full }
  local parts = {}
  local vrows = {}
  for _, node in ipairs(sorted_keys(op.v)) do
    -- the reference node is 0 V by definition: listed only on request
    if opts.ground or (node ~= "0" and node ~= "gnd" and node ~= 0) then
      vrows[#vrows + 1] = { node = tostring(node), v = op.v[node] }
    end
  end
  if format == "csv" then
    -- one CSV with a kind column, so a single file holds both parts
    local rows = {}
    for _, r in ipairs(vrows) do rows[#rows + 1] = { kind = "node", name = r.node, v = r.v } end
    for _, name in ipairs(sorted_keys(op.i, op.p, op.state, op.vd)) do
      rows[#rows + 1] = { kind = "element", name = tostring(name), v = op.vd and op.vd[name],
        i = op.i and op.i[name], p = op.p and op.p[name],
        state = op.state and op.state[name] }
    end
    return M.table(rows, { "kind", "name", { name = "v", unit = "V" }, { name = "i", unit = "A" },
      { name = "p", unit = "W" }, "state" }, { format = "csv", full = opts.full, out = opts.out })
  end
  if #vrows > 0 then
    topts.title = format == "text" and "node voltages" or "node voltages"
    parts[#parts + 1] = M.table(vrows, { { name = "node", key = "node" },
      { name = "v", key = "v", unit = "V" } }, topts)
  end
  local erows = {}
  local has_vd = type(op.vd) == "table"
  for _, name in ipairs(sorted_keys(op.i, op.p, op.state, op.vd)) do
    local on_bp = type(op.on_breakpoint) == "table" and op.on_breakpoint[name]
    erows[#erows + 1] = { name = tostring(name), v = has_vd and op.vd[name] or nil,
      i = op.i and op.i[name], p = op.p and op.p[name],
      state = op.state and op.state[name], knot = on_bp and "yes" or nil }
  end
  local any_bp = false
  for _, r in ipairs(erows) do if r.knot then any_bp = true end end
  if #erows > 0 then
    local cols = { { name = "element", key = "name" } }
    if has_vd then cols[#cols + 1] = { name = "v", key = "v", unit = "V" } end
    cols[#cols + 1] = { name = "i", key = "i", unit = "A" }
    cols[#cols + 1] = { name = "p", key = "p", unit = "W" }
    if type(op.state) == "table" and next(op.state) then
      cols[#cols + 1] = { name = "state", key = "state", align = "right" }
    end
    -- a device sitting exactly on a knot: either neighbouring segment is valid
    if any_bp then cols[#cols + 1] = { name = "on knot", key = "knot" } end
    topts.title = "elements"
    parts[#parts + 1] = M.table(erows, cols, topts)
  end
  local w = op.warnings
  if type(w) == "table" and #w > 0 then
    local l = {}
    for i = 1, #w do
      l[i] = (format == "markdown" and "- " or "") .. "warning: " .. tostring(w[i])
    end
    parts[#parts + 1] = concat(l, "\n") .. "\n"
  end
  local how = {}
  if op.method then how[#how + 1] = "method: " .. tostring(op.method) end
  if op.iterations then how[#how + 1] = "iterations: " .. tostring(op.iterations) end
  if #how > 0 then parts[#parts + 1] = concat(how, ", ") .. "\n" end
  return finish(parts, opts, F)
end

--- Several fits of one curve side by side: segments, max abs error and
-- where, max relative error and where, rms error (from model:compare).
-- @tparam {{name=string, model=model},...} fits
-- @param curve the curve every model is checked against
-- @tparam[opt] table opts {x =, y =, range = {lo=,hi=,n=} (passed to compare),
--   format =, out =, digits =, sort = "max_abs"|"max_rel"|"rms"|nil}
-- @treturn string
function M.compare_fits(fits, curve, opts)
  opts = opts or {}
  local F = "segwise.report.compare_fits"
  if type(fits) ~= "table" or #fits == 0 then
    error(F .. ": fits must be a non-empty list of {name=, model=}", 2)
  end
  local xu, yu = units_of(opts)
  local rows = {}
  for i, f in ipairs(fits) do
    if type(f) ~= "table" or f.model == nil then
      error(fmt("%s: fits[%d] must be {name=, model=}", F, i), 2)
    end
    local name = f.name or ("fit " .. i)
    method_or_fail(f.model, "compare", F, fmt("fits[%d] ('%s')", i, name))
    local ok, c
    if opts.range then ok, c = pcall(f.model.compare, f.model, curve, opts.range)
    else ok, c = pcall(f.model.compare, f.model, curve) end
    if not ok then error(fmt("%s: fits[%d] ('%s'): %s", F, i, name, tostring(c)), 2) end
    rows[i] = { name = name, nseg = f.model:nseg(), max_abs = c.max_abs, x_abs = c.x_abs,
      max_rel = c.max_rel, x_rel = c.x_rel, rms = c.rms }
  end
  if opts.sort then
    local key = opts.sort
    table.sort(rows, function(a, b) return (a[key] or huge) < (b[key] or huge) end)
  end
  local format = opts.format or "text"
  local csv = format == "csv"
  local cols = {
    { name = "fit", key = "name" },
    { name = "segments", key = "nseg" },
    { name = "max abs", key = "max_abs", unit = yu },
    { name = "at", key = "x_abs", unit = xu },
    csv and { name = "max rel (fraction)", key = "max_rel" } or { name = "max rel", key = "max_rel", unit = "%", scale = 100 },
    { name = "at", key = "x_rel", unit = xu },
    { name = "rms", key = "rms", unit = yu },
  }
  return M.table(rows, cols, { format = format, digits = opts.digits, out = opts.out,
    title = opts.title, full = opts.full, empty = csv and "" or DASH })
end

----------------------------------------------------------------------------
-- JSON

local JSON_ESC = { ['"'] = '\\"', ["\\"] = "\\\\", ["\b"] = "\\b", ["\f"] = "\\f",
  ["\n"] = "\\n", ["\r"] = "\\r", ["\t"] = "\\t" }

local function json_string(str)
  return '"' .. str:gsub('[%c"\\]', function(c)
    return JSON_ESC[c] or fmt("\\u%04x", c:byte())
  end) .. '"'
end

local function json_value(v, full, seen, path, out)
  local t = type(v)
  if v == nil then out[#out + 1] = "null"
  elseif t == "boolean" then out[#out + 1] = tostring(v)
  elseif t == "number" then
    -- JSON has no NaN or infinity: they become null
    if v ~= v or v == huge or v == -huge then out[#out + 1] = "null"
    elseif math.type(v) == "integer" then out[#out + 1] = tostring(v)
    else out[#out + 1] = fmt(full and "%.17g" or "%.10g", v) end
  elseif t == "string" then out[#out + 1] = json_string(v)
  elseif t == "table" or t == "userdata" then
    if seen[v] then error("segwise.report.json: " .. path .. " refers back to itself", 0) end
    local n = 0
    local ok_len, len = pcall(function() return #v end)
    if t == "userdata" then
      -- arrays of doubles (sw.array) have a length and numeric indices
      if not ok_len then error("segwise.report.json: " .. path .. " is a userdata without a length", 0) end
      n = len
    else
      local count = 0
      for _ in pairs(v) do count = count + 1 end
      n = (ok_len and len == count) and len or -1
      if count == 0 then n = 0 end
    end
    seen[v] = true
    if n >= 0 then
      out[#out + 1] = "["
      for k = 1, n do
        if k > 1 then out[#out + 1] = "," end
        json_value(v[k], full, seen, path .. "[" .. k .. "]", out)
      end
      out[#out + 1] = "]"
    else
      local keys = {}
      for k in pairs(v) do
        local kt = type(k)
        if kt ~= "string" and kt ~= "number" then
          error("segwise.report.json: " .. path .. " has a " .. kt .. " key", 0)
        end
        keys[#keys + 1] = k
      end
      table.sort(keys, function(a, b) return tostring(a) < tostring(b) end)
      out[#out + 1] = "{"
      for i, k in ipairs(keys) do
        if i > 1 then out[#out + 1] = "," end
        out[#out + 1] = json_string(tostring(k))
        out[#out + 1] = ":"
        json_value(v[k], full, seen, path .. "." .. tostring(k), out)
      end
      out[#out + 1] = "}"
    end
    seen[v] = nil
  else
    error("segwise.report.json: " .. path .. " is a " .. t .. ", which JSON cannot hold", 0)
  end
end

--- Encodes a Lua value as JSON (for notebooks and other tools): tables
-- with keys 1..n become arrays, other tables objects with sorted keys;
-- arrays of doubles (sw.array) become arrays; NaN and infinities become
-- null (JSON has none).  Numbers keep 10 significant digits, or 17 with
-- opts.full.
-- @param value
-- @tparam[opt] table opts {out = path or handle, full = false}
-- @treturn string
function M.json(value, opts)
  opts = opts or {}
  local out = {}
  local ok, err = pcall(json_value, value, opts.full, {}, "value", out)
  if not ok then error(err, 2) end
  return M.write(opts.out, concat(out) .. "\n", "segwise.report.json")
end

return M
