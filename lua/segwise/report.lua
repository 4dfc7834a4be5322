--- segwise.report: SI formatting, tables (text, CSV, markdown), JSON and
-- ready-made reports for fits, operating points and fit comparisons.
-- No numerics live here: the numbers come from the C core, this module only
-- lays them out.
--
--   report.si(value, unit, digits)      "4.31 mA"      (segwise.report.si)
--   report.parse_si(text [, unit])      4700, "Ω"      (segwise.report.si)
--   report.table(rows, columns, opts)   text | csv | markdown (segwise.report.tables)
--   report.json(value, opts)            JSON text      (segwise.report.json)
--   report.write(out, text)             atomic write to a path, or a handle
--   report.fit_table, report.op_table, report.compare_fits   (below)
-- @module segwise.report

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local si = require "segwise.report.si"
local tables = require "segwise.report.tables"
local json = require "segwise.report.json"
local check_opts = require("segwise.util").check_opts

local M = {
  si = si.si, si_in = si.si_in, si_step = si.si_step, parse_si = si.parse_si, PREFIX = si.PREFIX,
  table = tables.table, write = require "segwise.report.write",
}

-- json's own errors count their level from json itself: a tail call keeps
-- this wrapper out of the way.
function M.json(value, opts)
  check_opts("report.json", opts, { out = "string|userdata|table", full = "boolean" })
  return json(value, opts)
end

local huge, abs = math.huge, math.abs
local fmt = numtext.format
local concat = table.concat
local DASH = "\u{2014}"       -- em dash: "no value" in a cell
local md_escape = tables.md_escape

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

-- Largest |y| of a model over its range: a PWL model takes its extremes
-- at segment ends.
local function model_ymax(model)
  local ymax = 0
  for k = 1, model:nseg() do
    local sg = model:seg(k)
    local b, a = sg.slope or sg[3], sg.intercept or sg[4]
    for _, x in ipairs { sg.lo or sg[1], sg.hi or sg[2] } do
      local y = abs(a + b * x)
      if y == y and y ~= huge and y > ymax then ymax = y end
    end
  end
  return ymax
end

--- Relative errors near a zero of the curve.  Rule (fit_table and
-- compare_fits, text and markdown; CSV keeps the raw numbers):
-- a relative error prints as a dash when
--  1. it is undefined (nil or NaN: the curve reaches 0 and no floor is set), or
--  2. no floor is in force, the fit was not made on relative error, and the
--     denominator at the maximum is below rel_zero (default 1e-6) times the
--     model's largest |y|.  That denominator, |y(x_rel)| = |err(x_rel)| /
--     max_rel, is at most max_abs / max_rel, so the test is
--     max_abs / max_rel < rel_zero * ymax: a figure larger than the absolute
--     error over one part per million of full scale measures how close the
--     curve comes to 0, not the fit.
-- A floor (rel_floor, given to the report or used by the fit) is the
-- user's own smallest denominator: its figures always print.
M.REL_ZERO = 1e-6

local function rel_shown(max_rel, max_abs, j)
  if type(max_rel) ~= "number" or max_rel ~= max_rel then return nil, true end
  if j.floored or j.rel_fit or max_rel == 0 then return max_rel end
  if type(max_abs) == "number" and max_abs / max_rel < j.rel_zero * j.ymax then return nil, true end
  return max_rel
end

local function check_positive(v, name, fname, allow_zero)
  if v == nil then return end
  if type(v) ~= "number" or v ~= v or v == huge or v < 0 or (v == 0 and not allow_zero) then
    error(fmt("%s: %s must be a %s finite number (got %s)", fname, name,
      allow_zero and "non-negative" or "positive", numtext.str(v)), 3)
  end
end

--- Fit report: a summary of how the model was made and its errors, then one
-- row per segment: range, slope, intercept, Thevenin e/r, Norton j/g (a
-- dash where the segment is flat and has no Norton form), and the
-- segment's max error and where.
-- Error columns come from the model's fit_info(), or, when opts.curve is
-- given, from model:compare(curve, {lo=, hi=, rel_floor=}) per segment.
-- rel_floor is the smallest |y| used as the denominator of the relative
-- error; a floor other than the fit's own needs opts.curve (the figures are
-- recomputed against it).  Near-zero relative errors: see the rule above.
-- @param model a PWL model (nseg, seg, thevenin, norton, fit_info, knots)
-- @tparam[opt] table opts {x = "A", y = "V", format =, out =, digits =,
--   curve = the curve the model approximates, rel_floor = number > 0,
--   rel_zero = 1e-6, cell_units = "auto"|"header"|"cells"}
-- @treturn string
local FIT_TABLE_OPTS = { x = "string", y = "string", units = "table", format = "string",
  out = "any", digits = "number", curve = "any", rel_floor = "any", rel_zero = "any",
  cell_units = "string", full = "boolean" }

-- Which circuit form a segment is as it stands: an i(v) model (x in V, y
-- in A) gives i = j + g*v, a Norton form; a v(i) model gives v = e + r*i,
-- a Thevenin form.  nil when the units do not tell.
local function orientation(xu, yu)
  if xu == "V" and yu == "A" then return "i(v)" end
  if xu == "A" and yu == "V" then return "v(i)" end
end

-- Thevenin e, r and Norton j, g of segment k, each labelled for what it is
-- (for unknown units: y = e + r*x and x = j + g*y).
local function circuit_forms(model, k, row, orient)
  local okt, a, b = pcall(model.thevenin, model, k)
  local okn, c, d = pcall(model.norton, model, k)
  if orient == "i(v)" then okt, a, b, okn, c, d = okn, c, d, okt, a, b end
  if okt then row.e, row.r = a, b end
  if okn then row.j, row.g = c, d end
end

local function forms_note(orient)
  if orient == nil then
    return fmt("y = e + r*x, x = j + g*y; %s: flat segment, no second form\n", DASH)
  end
  return fmt("v = e + r*i (Thevenin), i = j + g*v (Norton); %s: flat segment, no %s form\n",
    DASH, orient == "i(v)" and "Thevenin" or "Norton")
end

function M.fit_table(model, opts)
  opts = check_opts("report.fit_table", opts, FIT_TABLE_OPTS)
  local F = "segwise.report.fit_table"
  for _, m in ipairs { "nseg", "seg", "thevenin", "norton" } do
    method_or_fail(model, m, F, "model")
  end
  check_positive(opts.rel_floor, "rel_floor", F)
  check_positive(opts.rel_zero, "rel_zero", F, true)
  local xu, yu = units_of(opts)
  local orient = orientation(xu, yu)
  local su, gu = ratio_unit(yu, xu), ratio_unit(xu, yu)
  -- the units of e, r, j, g: an i(v) model's Thevenin form is v(i)
  local eu, ru, ju, guu = yu, su, xu, gu
  if orient == "i(v)" then eu, ru, ju, guu = xu, gu, yu, su end
  local info
  if type(model.fit_info) == "function" then info = model:fit_info() end
  if type(info) ~= "table" then info = nil end
  local floor = opts.rel_floor or (info and info.rel_floor)
  local curve = opts.curve
  if curve ~= nil then method_or_fail(model, "compare", F, "model") end
  if opts.rel_floor and curve == nil and not (info and info.rel_floor == opts.rel_floor) then
    error(F .. ": rel_floor needs curve = the curve the model approximates (the relative "
      .. "errors are recomputed against it)", 2)
  end
  local function compare(lo, hi, what)
    local ok, c = pcall(model.compare, model, curve, { lo = lo, hi = hi, rel_floor = floor })
    if not ok then error(fmt("%s: %s: %s", F, what, numtext.str(c)), 3) end
    if type(c) ~= "table" then error(fmt("%s: %s: compare returned no table", F, what), 3) end
    return c
  end
  local per = info and info.per_segment or {}
  local has_err = (info and info.per_segment) or curve ~= nil
  local rows = {}
  for k = 1, model:nseg() do
    local s = model:seg(k)
    local row = { k = k, lo = s.lo or s[1], hi = s.hi or s[2],
      slope = s.slope or s[3], intercept = s.intercept or s[4] }
    circuit_forms(model, k, row, orient)
    if curve ~= nil then
      local c = compare(row.lo, row.hi, fmt("segment %d", k))
      row.max_abs, row.x_err, row.max_rel = c.max_abs, c.x_abs, c.max_rel
    else
      local p = per[k]
      if p then row.max_abs, row.x_err, row.max_rel = p.max_abs, p.x, p.max_rel end
    end
    rows[k] = row
  end
  local judge = { floored = floor ~= nil and floor > 0,
    rel_fit = info ~= nil and info.error == "rel",
    rel_zero = opts.rel_zero or M.REL_ZERO, ymax = model_ymax(model) }
  local dashed = false
  for _, row in ipairs(rows) do
    local v, d = rel_shown(row.max_rel, row.max_abs, judge)
    row.rel_shown = v
    dashed = dashed or (d and row.max_abs ~= nil)
  end
  local cols = {
    { name = "seg", key = "k" },
    { name = "from", key = "lo", unit = xu },
    { name = "to", key = "hi", unit = xu },
    { name = "slope", key = "slope", unit = su },
    { name = "intercept", key = "intercept", unit = yu },
    { name = "e", key = "e", unit = eu, optional = true },
    { name = "r", key = "r", unit = ru, optional = true },
    { name = "j", key = "j", unit = ju, optional = true },
    { name = "g", key = "g", unit = guu, optional = true },
  }
  if has_err then
    cols[#cols + 1] = { name = "max err", key = "max_abs", unit = yu, optional = true }
    cols[#cols + 1] = { name = "at", key = "x_err", unit = xu, optional = true }
    cols[#cols + 1] = { name = "max rel", key = "rel_shown", unit = "%", scale = 100,
      optional = true }
  end
  local format = opts.format or "text"
  local topts = { format = format, digits = opts.digits, units = opts.cell_units,
    empty = (format == "csv") and "" or DASH, full = opts.full }
  -- CSV keeps raw numbers; the percent column is then a fraction
  if format == "csv" then
    cols[#cols] = cols[#cols] and cols[#cols].key == "rel_shown"
      and { name = "max rel (fraction)", key = "max_rel", optional = true } or cols[#cols]
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
  local sum = info
  if curve ~= nil then
    local lo, hi = rows[1].lo, rows[#rows].hi
    sum = compare(lo, hi, "whole range")
  end
  if info then
    head[#head + 1] = fmt("fit: %s, %s error%s", numtext.str(info.criterion or "?"),
      numtext.str(info.error or "?"),
      info.segments and fmt(", segments %s", numtext.str(info.segments)) or "")
  end
  if sum then
    local e = {}
    if sum.max_abs then
      e[#e + 1] = "max abs " .. human(sum.max_abs, yu, d) .. " at " .. human(sum.x_abs, xu, d)
    end
    local rel, dash = rel_shown(sum.max_rel, sum.max_abs, judge)
    if rel then
      e[#e + 1] = "max rel " .. M.si_in(rel * 100, 0, d or 3) .. " % at " .. human(sum.x_rel, xu, d)
    elseif dash and sum.max_abs then
      e[#e + 1] = "max rel " .. DASH; dashed = true
    end
    if sum.rms then e[#e + 1] = "rms " .. human(sum.rms, yu, d) end
    if floor and floor > 0 then e[#e + 1] = "rel floor " .. human(floor, yu, d) end
    if #e > 0 then
      head[#head + 1] = (curve ~= nil and "error against the curve: " or "error: ")
        .. concat(e, ", ")
    end
  end
  if format == "markdown" then
    for i = 1, #head do head[i] = "- " .. md_escape(head[i]) end
  end
  parts[1] = concat(head, "\n") .. "\n"
  parts[2] = tbl
  if format ~= "markdown" then
    parts[3] = forms_note(orient)
  end
  if dashed then
    local note = fmt("%smax rel %s: the curve is near 0 there (give rel_floor and curve)\n",
      format == "markdown" and "- " or "", DASH)
    if format == "markdown" then parts[#parts + 1] = note
    else parts[#parts] = parts[#parts] .. note end
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
    local na, nb = numtext.tonumber(a), numtext.tonumber(b)
    if na and nb then return na < nb end
    if na then return true end
    if nb then return false end
    return numtext.str(a) < numtext.str(b)
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
local OP_TABLE_OPTS = { format = "string", out = "any", digits = "number", full = "boolean",
  ground = "boolean", group = "number" }

-- At least this many elements raising one kind of caution print as one line.
M.GROUP_CAUTIONS = 4

-- Names for a grouped line: all of a few, else the first three and a count.
local function abbreviated(names)
  if #names <= 4 then return concat(names, ", ") end
  return fmt("%s, %s, %s and %d more", names[1], names[2], names[3], #names - 3)
end

-- The printed cautions: op.warnings one per line, except that a kind raised
-- by at least `group` elements (op.warning_info tells kind, element and how
-- bad) prints as one line: kind, count, names, the worst case.
local function caution_lines(op, group)
  local w, info = op.warnings, type(op.warning_info) == "table" and op.warning_info or {}
  local by_kind, order = {}, {}
  for i = 1, #w do
    local d = info[i]
    if type(d) == "table" and d.kind and d.element and d.group then
      if not by_kind[d.kind] then by_kind[d.kind] = {}; order[#order + 1] = d.kind end
      local list = by_kind[d.kind]
      list[#list + 1] = d
    end
  end
  local lines, done = {}, {}
  for i = 1, #w do
    local d = info[i]
    local list = type(d) == "table" and d.kind and by_kind[d.kind]
    if list and #list >= group then
      if not done[d.kind] then
        done[d.kind] = true
        local names, worst = {}, list[1]
        for k, e in ipairs(list) do
          names[k] = e.element
          if (e.worst or 0) > (worst.worst or 0) then worst = e end
        end
        lines[#lines + 1] = fmt("%d %s: %s; worst %s%s (op.warnings lists each)", #list, d.group,
          abbreviated(names), worst.element, worst.detail and (" " .. worst.detail) or "")
      end
    else
      lines[#lines + 1] = numtext.str(w[i])
    end
  end
  return lines
end

function M.op_table(op, opts)
  opts = check_opts("report.op_table", opts, OP_TABLE_OPTS)
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
      vrows[#vrows + 1] = { node = numtext.str(node), v = op.v[node] }
    end
  end
  if format == "csv" then
    -- one CSV with a kind column, so a single file holds both parts
    local rows = {}
    for _, r in ipairs(vrows) do rows[#rows + 1] = { kind = "node", name = r.node, v = r.v } end
    for _, name in ipairs(sorted_keys(op.i, op.p, op.state, op.vd)) do
      rows[#rows + 1] = { kind = "element", name = numtext.str(name), v = op.vd and op.vd[name],
        i = op.i and op.i[name], p = op.p and op.p[name],
        state = op.state and op.state[name] }
    end
    return M.table(rows, { "kind", "name", { name = "v", unit = "V" },
      { name = "i", unit = "A", optional = true }, { name = "p", unit = "W", optional = true },
      { name = "state", optional = true } }, { format = "csv", full = opts.full, out = opts.out })
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
    erows[#erows + 1] = { name = numtext.str(name), v = has_vd and op.vd[name] or nil,
      i = op.i and op.i[name], p = op.p and op.p[name],
      state = op.state and op.state[name], knot = on_bp and "yes" or nil }
  end
  local any_bp = false
  for _, r in ipairs(erows) do if r.knot then any_bp = true end end
  if #erows > 0 then
    local cols = { { name = "element", key = "name" } }
    if has_vd then cols[#cols + 1] = { name = "v", key = "v", unit = "V", optional = true } end
    cols[#cols + 1] = { name = "i", key = "i", unit = "A", optional = true }
    cols[#cols + 1] = { name = "p", key = "p", unit = "W", optional = true }
    if type(op.state) == "table" and next(op.state) then
      cols[#cols + 1] = { name = "state", key = "state", align = "right" }
    end
    -- a device sitting exactly on a knot: either neighbouring segment is valid
    if any_bp then cols[#cols + 1] = { name = "on knot", key = "knot" } end
    topts.title = "elements"
    parts[#parts + 1] = M.table(erows, cols, topts)
  end
  if type(op.warnings) == "table" and #op.warnings > 0 then
    local l = caution_lines(op, opts.group or M.GROUP_CAUTIONS)
    for i = 1, #l do
      l[i] = (format == "markdown" and "- " or "") .. "warning: " .. l[i]
    end
    parts[#parts + 1] = concat(l, "\n") .. "\n"
  end
  local how = {}
  if op.method then how[#how + 1] = "method: " .. numtext.str(op.method) end
  if op.iterations then how[#how + 1] = "iterations: " .. numtext.str(op.iterations) end
  if #how > 0 then parts[#parts + 1] = concat(how, ", ") .. "\n" end
  return finish(parts, opts, F)
end

--- Several fits of one curve side by side: segments, max abs error and
-- where, max relative error and where, rms error (from model:compare).
-- The floor of the relative error is range.rel_floor (or rel_floor);
-- without one, near-zero relative errors print as a dash (rule above).
-- @tparam {{name=string, model=model},...} fits
-- @param curve the curve every model is checked against
-- @tparam[opt] table opts {x =, y =, range = {lo=,hi=,n=,rel_floor=} (passed to compare),
--   rel_floor = number > 0 (same as range.rel_floor), rel_zero = 1e-6,
--   format =, out =, digits =, sort = "max_abs"|"max_rel"|"rms"|nil}
-- @treturn string
local COMPARE_FITS_OPTS = { x = "string", y = "string", units = "table", range = "any",
  rel_floor = "any", rel_zero = "any", format = "string", out = "any", digits = "number",
  sort = { "max_abs", "max_rel", "rms" }, title = "string", full = "boolean" }

function M.compare_fits(fits, curve, opts)
  opts = check_opts("report.compare_fits", opts, COMPARE_FITS_OPTS)
  local F = "segwise.report.compare_fits"
  if type(fits) ~= "table" or #fits == 0 then
    error(F .. ": fits must be a non-empty list of {name=, model=}", 2)
  end
  if opts.range ~= nil and type(opts.range) ~= "table" then
    error(F .. ": range must be a table {lo=, hi=, n=, rel_floor=}", 2)
  end
  check_positive(opts.rel_floor, "rel_floor", F)
  check_positive(opts.rel_zero, "rel_zero", F, true)
  local range = opts.range
  if opts.rel_floor then
    -- a copy, so the caller's range table is left as it was
    range = {}
    for k, v in pairs(opts.range or {}) do range[k] = v end
    range.rel_floor = opts.rel_floor
  end
  local floor = range and range.rel_floor
  local xu, yu = units_of(opts)
  local rows = {}
  local csv = (opts.format or "text") == "csv"
  for i, f in ipairs(fits) do
    if type(f) ~= "table" or f.model == nil then
      error(fmt("%s: fits[%d] must be {name=, model=}", F, i), 2)
    end
    local name = f.name or ("fit " .. i)
    method_or_fail(f.model, "compare", F, fmt("fits[%d] ('%s')", i, name))
    local ok, c
    if range then ok, c = pcall(f.model.compare, f.model, curve, range)
    else ok, c = pcall(f.model.compare, f.model, curve) end
    if not ok then error(fmt("%s: fits[%d] ('%s'): %s", F, i, name, numtext.str(c)), 2) end
    local info
    if type(f.model.fit_info) == "function" then info = f.model:fit_info() end
    local judge = { floored = type(floor) == "number" and floor > 0,
      rel_fit = type(info) == "table" and info.error == "rel",
      rel_zero = opts.rel_zero or M.REL_ZERO, ymax = model_ymax(f.model) }
    local rel = c.max_rel
    if not csv then rel = rel_shown(c.max_rel, c.max_abs, judge) end
    rows[i] = { name = name, nseg = f.model:nseg(), max_abs = c.max_abs, x_abs = c.x_abs,
      max_rel = rel, x_rel = rel and c.x_rel, rms = c.rms }
  end
  if opts.sort then
    local key = opts.sort
    table.sort(rows, function(a, b) return (a[key] or huge) < (b[key] or huge) end)
  end
  local format = opts.format or "text"
  local cols = {
    { name = "fit", key = "name" },
    { name = "segments", key = "nseg" },
    { name = "max abs", key = "max_abs", unit = yu, optional = true },
    { name = "at", key = "x_abs", unit = xu, optional = true },
    csv and { name = "max rel (fraction)", key = "max_rel", optional = true }
      or { name = "max rel", key = "max_rel", unit = "%", scale = 100, optional = true },
    { name = "at", key = "x_rel", unit = xu, optional = true },
    { name = "rms", key = "rms", unit = yu, optional = true },
  }
  return M.table(rows, cols, { format = format, digits = opts.digits, out = opts.out,
    title = opts.title, full = opts.full, empty = csv and "" or DASH })
end

return M
