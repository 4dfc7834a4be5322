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

local si = require "segwise.report.si"
local tables = require "segwise.report.tables"

local M = {
  si = si.si, si_in = si.si_in, si_step = si.si_step, parse_si = si.parse_si, PREFIX = si.PREFIX,
  table = tables.table, write = require "segwise.report.write", json = require "segwise.report.json",
}

local huge = math.huge
local fmt = string.format
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

return M
