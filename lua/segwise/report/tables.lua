--- segwise.report.tables: rows as aligned text, CSV (RFC 4180) or
-- markdown, with SI units.
-- @module segwise.report.tables

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local si = require "segwise.report.si"
local write = require "segwise.report.write"
local util = require "segwise.util"

local M = {}

local floor, abs, huge = math.floor, math.abs, math.huge
local fmt = numtext.format
local concat = table.concat
local nonfinite_text = si.nonfinite_text
local PREFIX = si.PREFIX

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

-- The fields of a column table (the checks of their values follow below);
-- [1] and [2] are name and key given by position.
local COLUMN_FIELDS = { name = "any", key = "string|number", unit = "any", fmt = "any", fn = "any",
  align = "any", digits = "number", scale = "number", si = "boolean", optional = "boolean",
  [1] = "string", [2] = "string|number" }

-- Normalises one column spec.
local function norm_column(c, i)
  if type(c) == "string" then return { name = c, key = c } end
  if type(c) ~= "table" then
    error(fmt("segwise.report.table: column %d must be a name or a table (got %s)", i, type(c)), 3)
  end
  util.check_opts(fmt("report.table: column %d", i), c, COLUMN_FIELDS, "field", 4)
  local name = c.name or c.key or c[1]
  if type(name) ~= "string" then
    error(fmt("segwise.report.table: column %d needs a name", i), 3)
  end
  if c.fmt ~= nil and type(c.fmt) ~= "string" and type(c.fmt) ~= "function" then
    error(fmt("segwise.report.table: column '%s': fmt must be a format string or a function",
      name), 3)
  end
  if c.fn ~= nil and type(c.fn) ~= "function" then
    error(fmt("segwise.report.table: column '%s': fn must be a function of the row", name), 3)
  end
  if c.align ~= nil and c.align ~= "left" and c.align ~= "right" and c.align ~= "center" then
    error(fmt("segwise.report.table: column '%s': align must be 'left', 'right' or 'center'",
      name), 3)
  end
  if c.unit ~= nil and type(c.unit) ~= "string" then
    error(fmt("segwise.report.table: column '%s': unit must be a string", name), 3)
  end
  return { name = name, key = c.key or c[2] or name, unit = c.unit, fmt = c.fmt,
    fn = c.fn, align = c.align, digits = c.digits, scale = c.scale, si = c.si,
    optional = c.optional }
end

local function cell_value(col, row, r)
  if col.fn then
    local ok, v = pcall(col.fn, row)
    if not ok then
      error(fmt("segwise.report.table: column '%s', row %d: %s", col.name, r, numtext.str(v)), 4)
    end
    return v
  end
  local v = row[col.key]
  if v == nil and type(col.key) == "string" and col.key:find(".", 1, true) then
    -- a dotted key reaches into nested tables: "i.D1" is row.i.D1 (sweep rows)
    v = row
    for part in col.key:gmatch("[^.]+") do
      if type(v) ~= "table" then return nil end
      v = v[part]
    end
  end
  return v
end

-- The keys a (dotted) column key could have meant: those of the rows, or
-- of their nested tables along the path as far as it goes ("i.RA").
local function reachable_keys(rows, key)
  local seen, names = {}, {}
  for _, row in ipairs(rows) do
    local t, prefix = row, ""
    if type(key) == "string" then
      for part in key:gmatch("([^.]+)%.") do
        if type(t[part]) ~= "table" then break end
        t, prefix = t[part], prefix .. part .. "."
      end
    end
    for k in pairs(t) do
      local name = prefix .. numtext.str(k)
      if not seen[name] then seen[name] = true; names[#names + 1] = name end
    end
  end
  return names
end

-- A column that names a key no row holds is a typo, not an empty column
-- (columns computed by fn, or marked optional, may be empty).
local function check_column_keys(rows, cols)
  if #rows == 0 then return end
  for i, col in ipairs(cols) do
    if not col.fn and not col.optional then
      local filled = false
      for r = 1, #rows do
        if cell_value(col, rows[r], r) ~= nil then filled = true; break end
      end
      if not filled then
        util.unknown(fmt("report.table: column %d ('%s')", i, col.name), "row key", col.key,
          reachable_keys(rows, col.key), 3)
      end
    end
  end
end

local function plain_number(v, digits)
  if v ~= v or v == huge or v == -huge then return nonfinite_text(v) end
  if math.type(v) == "integer" then return numtext.str(v) end
  if v == floor(v) and abs(v) < 1e15 then return fmt("%d", v) end
  local s = fmt("%." .. digits .. "g", v)
  return s
end

local function apply_fmt(col, v, r)
  if type(col.fmt) == "function" then
    local ok, s = pcall(col.fmt, v)
    if not ok then
      error(fmt("segwise.report.table: column '%s', row %d: fmt failed: %s", col.name, r,
        numtext.str(s)), 5)
    end
    return numtext.str(s)
  end
  if type(v) == "number" and (v ~= v or v == huge or v == -huge)
      and not col.fmt:find("%%[%d.]*[sq]") then
    return nonfinite_text(v)
  end
  local ok, s = pcall(fmt, col.fmt, v)
  if not ok then
    error(fmt("segwise.report.table: column '%s', row %d: format %q does not fit value %s",
      col.name, r, col.fmt, numtext.str(v)), 5)
  end
  return s
end

-- Smallest and largest finite non-zero magnitude in vals (nil when none).
local function magnitude_range(vals, n)
  local lo, hi
  for r = 1, n do
    local v = vals[r]
    if type(v) == "number" and v == v and v ~= 0 and abs(v) ~= huge then
      local a = abs(v)
      if not lo or a < lo then lo = a end
      if not hi or a > hi then hi = a end
    end
  end
  return lo, hi
end

-- Columns whose magnitudes span more than this many decades get one
-- prefix per cell (see human_cells).
M.SPAN_DECADES = 4

-- Builds the header and cell strings for the human formats (text, markdown).
-- Rule for units: a column with `unit` and no `fmt` prints every value as a
-- mantissa in ONE SI prefix for the whole column, chosen from the largest
-- magnitude, and the header carries it: "I (mA)".  With `fmt`, the header is
-- "I (A)" and values are in the base unit.  opts.units = "cells" instead
-- prints each value with its own prefix and unit ("4.31 mA"), header "I".
-- Wide columns: with opts.units = "auto" (the default), a prefixed column
-- whose finite non-zero magnitudes span more than opts.span decades
-- (default 4: largest / smallest > 10^4) falls back to the per-cell style
-- for that column alone, since one shared prefix would print its small
-- cells as "0.000128 k..." or its large ones as "60100 m...".
-- opts.units = "header" always shares one prefix.
local function human_cells(rows, cols, opts)
  local digits = opts.digits or 3
  local span = opts.span or M.SPAN_DECADES
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
    local prefixed = col.unit and not col.fmt and col.si ~= false and col.unit ~= "%"
    local per_cell = opts.units == "cells"
    if prefixed and not per_cell and opts.units ~= "header" then
      local lo, hi = magnitude_range(vals, #rows)
      if lo and hi / lo > 10 ^ span then per_cell = true end
    end
    local e3
    if col.unit and not col.fmt and not per_cell and not prefixed then
      e3 = 0
    elseif col.unit and not col.fmt and not per_cell then
      local _, maxabs = magnitude_range(vals, #rows)
      e3 = maxabs and si.si_step(maxabs, d) or 0
    end
    if col.unit and col.unit ~= "" and (not per_cell or col.fmt) then
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
        if col.unit and per_cell and prefixed then
          s = si.si(v, col.unit, d)
        elseif col.unit and per_cell then
          s = si.si_in(v, 0, d) .. " " .. col.unit
        elseif col.unit then s = si.si_in(v, e3, d)
        else s = plain_number(v, math.max(d, 4)) end
      else
        s = numtext.str(v)
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
  if opts.title then
    lines[#lines + 1] = "**" .. md_escape(opts.title) .. "**"; lines[#lines + 1] = ""
  end
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
    for j = 1, #cols do
      l[j] = pad(cells[r][j], widths[j], aligns[j] == "right" and "right" or "left")
    end
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
        elseif math.type(v) == "integer" then s = numtext.str(v)
        else s = fmt(numfmt, v) end
      elseif type(col.fmt) == "function" then s = apply_fmt(col, v, r)
      else s = numtext.str(v) end
      l[j] = csv_field(s)
    end
    lines[#lines + 1] = concat(l, ",")
  end
  return concat(lines, eol) .. eol
end

local RENDER = { text = render_text, csv = render_csv, markdown = render_markdown,
  md = render_markdown }

-- The options of M.table (the values of format, units and span are
-- checked there, with their own messages).
local TABLE_OPTS = { format = "string", out = "string|userdata|table", digits = "number",
  units = "string", span = "any", full = "boolean", numfmt = "string", title = "string",
  eol = "string", empty = "string", sep = "string" }

--- Formats rows as a table.
-- @tparam {table,...} rows list of row tables
-- @tparam {string|table,...} columns names, or {name=, key=, unit=, fmt=, fn=, align=,
--   digits=, scale=, si = false (no prefix: one plain unit), optional = true (may be empty
--   in every row)};
--   a dotted key such as "i.D1" reads row.i.D1; a key that no row holds is an error
-- @tparam[opt] table opts {format = "text"|"csv"|"markdown", out = path or handle,
--   digits = 3, units = "auto"|"header"|"cells" (see human_cells), span = 4 (decades, for "auto"),
--   full = false (CSV %.17g), numfmt = "%.6g",
--   title = string, eol = "\n" (CSV), empty = "" (text for nil cells), sep = "  " (text)};
--   unknown option names are errors
-- @treturn string the table
function M.table(rows, columns, opts)
  opts = util.check_opts("report.table", opts, TABLE_OPTS)
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
  if opts.units ~= nil and opts.units ~= "auto" and opts.units ~= "header"
      and opts.units ~= "cells" then
    error("segwise.report.table: units must be 'auto', 'header' or 'cells' (got "
      .. numtext.str(opts.units) .. ")", 2)
  end
  if opts.span ~= nil
      and not (type(opts.span) == "number" and opts.span >= 0 and opts.span < huge) then
    error("segwise.report.table: span must be a number of decades >= 0 (got "
      .. numtext.str(opts.span) .. ")", 2)
  end
  local cols = {}
  for i, c in ipairs(columns) do cols[i] = norm_column(c, i) end
  check_column_keys(rows, cols)
  local format = opts.format or "text"
  local render = RENDER[format]
  if not render then
    error("segwise.report.table: format must be 'text', 'csv' or 'markdown' (got "
      .. numtext.str(format) .. ")", 2)
  end
  local s = render(rows, cols, opts)
  return write(opts.out, s, "segwise.report.table")
end

M.md_escape = md_escape

return M
