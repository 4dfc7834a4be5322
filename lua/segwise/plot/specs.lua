--- segwise.plot.specs: ready-made plot specs for the common studies: a
-- curve with its model(s) and knots, and the error of each model against
-- x.  They sample the curve and models through their own eval methods (the
-- C core does the evaluating) and return a spec for plot.svg / plot.term.
-- @module segwise.plot.specs

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local M = {}
local fmt = numtext.format

local function array_len(a)
  local ok, n = pcall(function() return #a end)
  return ok and n or nil
end

-- Values of obj at xs: one batch call to obj:eval(xs) when it takes
-- arrays, else one call per point.  Failures become NaN (a gap).
local function values_at(obj, xs, what, F)
  local ev = (type(obj) == "table" or type(obj) == "userdata") and obj.eval
  if ev then
    local ok, ys = pcall(ev, obj, xs)
    if ok and array_len(ys) == #xs then
      local out = {}
      for i = 1, #xs do out[i] = ys[i] end
      return out
    end
  end
  local out = {}
  for i = 1, #xs do
    local ok, v
    if ev then ok, v = pcall(ev, obj, xs[i]) else ok, v = pcall(obj, xs[i]) end
    out[i] = (ok and type(v) == "number") and v or 0 / 0
  end
  -- nothing evaluated at all: report why, rather than draw an empty plot
  local any = false
  for i = 1, #out do if out[i] == out[i] then any = true; break end end
  if #xs > 0 and not any then
    local ok, err
    if ev then ok, err = pcall(ev, obj, xs[1]) else ok, err = pcall(obj, xs[1]) end
    if not ok then error(fmt("%s: cannot evaluate %s: %s", F, what, numtext.str(err)), 4) end
  end
  return out
end

-- Normalises models: one model, or a list of {name=, model=}.
local function model_list(models, F)
  if models == nil then return {} end
  if (type(models) == "table" and models.model == nil and models[1] ~= nil) then
    local out = {}
    for i, m in ipairs(models) do
      if type(m) ~= "table" or m.model == nil then
        error(fmt("%s: models[%d] must be {name=, model=}", F, i), 3)
      end
      out[i] = { name = m.name or ("model " .. i), model = m.model }
    end
    return out
  end
  if type(models) == "table" and models.model ~= nil then
    return { { name = models.name or "model", model = models.model } }
  end
  -- a model, or anything shaped like one (it has a knots method)
  local ok, knots = pcall(function() return models.knots end)
  if not ok or type(knots) ~= "function" then
    error(fmt("%s: models must be a segwise model or a list of {name=, model=} (got %s)", F,
      type(models)), 3)
  end
  return { { name = "PWL model", model = models } }
end

local function knots_of(m)
  local ok, xs, ys, ys_left = pcall(m.knots, m)
  if not ok or type(xs) ~= "table" and type(xs) ~= "userdata" then return nil end
  return xs, ys, ys_left
end

-- The range: opts.lo/hi, else the first model's knots, else the curve's domain.
local function range(curve, list, opts, F)
  local lo, hi = opts.lo, opts.hi
  if (lo == nil or hi == nil) and list[1] then
    local xs = knots_of(list[1].model)
    if xs and #xs >= 2 then lo, hi = lo or xs[1], hi or xs[#xs] end
  end
  if (lo == nil or hi == nil) and curve ~= nil then
    local ok, a, b = pcall(function() return curve:domain() end)
    if ok and type(a) == "number" and type(b) == "number" then lo, hi = lo or a, hi or b end
  end
  if type(lo) ~= "number" or type(hi) ~= "number" or not (hi > lo) then
    error(fmt("%s: give the range as opts.lo and opts.hi (lo < hi)", F), 3)
  end
  return lo, hi
end

-- Evenly spaced sample abscissae for drawing (geometric when the axis is log).
local function grid(lo, hi, n, log)
  local xs = {}
  for i = 0, n - 1 do
    local t = i / (n - 1)
    if log and lo > 0 then xs[#xs + 1] = lo * (hi / lo) ^ t
    else xs[#xs + 1] = lo + (hi - lo) * t end
  end
  xs[#xs] = hi
  return xs
end

-- The polyline of a PWL model through its knots, with a gap at every jump.
local function model_polyline(m)
  local xs, ys, ys_left = knots_of(m)
  if not xs then return nil end
  local px, py = {}, {}
  for k = 1, #xs do
    local left = ys_left and ys_left[k] or ys[k]
    if k > 1 and left ~= ys[k] then
      px[#px + 1] = xs[k]; py[#py + 1] = left
      px[#px + 1] = xs[k]; py[#py + 1] = 0 / 0            -- break the line at a jump
    end
    px[#px + 1] = xs[k]; py[#py + 1] = ys[k]
  end
  return px, py
end

--- Curve and model(s), knots marked.
-- @param curve the curve (anything with eval/domain, or a function), or nil
-- @param models a model, or a list of {name=, model=}
-- @tparam[opt] table opts {lo=, hi=, n=200, x={label=, unit=, log=}, y={...},
--   title=, curve_label="exact"}
-- @treturn table a spec for plot.svg / plot.term
function M.fit(curve, models, opts)
  local F = "segwise.plot.fit_spec"
  opts = opts or {}
  local list = model_list(models, F)
  local lo, hi = range(curve, list, opts, F)
  local spec = { title = opts.title, x = opts.x or {}, y = opts.y or {}, series = {} }
  if curve ~= nil then
    local xs = grid(lo, hi, opts.n or 200, spec.x.log)
    spec.series[1] = { x = xs, y = values_at(curve, xs, "the curve", F),
      label = opts.curve_label or "exact" }
  end
  for i, m in ipairs(list) do
    local px, py = model_polyline(m.model)
    if not px then
      px = grid(lo, hi, opts.n or 200, spec.x.log)
      py = values_at(m.model, px, fmt("models[%d]", i), F)
    end
    spec.series[#spec.series + 1] = { x = px, y = py, label = m.name, marker = true }
  end
  return spec
end

--- Error of each model against the curve over x: model - curve, or with
-- opts.rel the relative error in percent, (model - curve) / |curve| * 100.
-- @tparam[opt] table opts as for fit, plus rel = bool
-- @treturn table a spec for plot.svg / plot.term
function M.error(curve, models, opts)
  local F = "segwise.plot.error_spec"
  opts = opts or {}
  if curve == nil then error(F .. ": a curve is needed to measure the error against", 2) end
  local list = model_list(models, F)
  if #list == 0 then error(F .. ": give at least one model", 2) end
  local lo, hi = range(curve, list, opts, F)
  local xs = grid(lo, hi, opts.n or 400, opts.x and opts.x.log)
  local exact = values_at(curve, xs, "the curve", F)
  local yspec = {}
  for k, v in pairs(opts.y or {}) do yspec[k] = v end
  if opts.rel then yspec.unit = "%"; yspec.label = yspec.label or "relative error"
  else yspec.label = yspec.label or "error" end
  local spec = { title = opts.title, x = opts.x or {}, y = yspec, series = {} }
  for i, m in ipairs(list) do
    local ym = values_at(m.model, xs, fmt("models[%d]", i), F)
    local e = {}
    for k = 1, #xs do
      local d = ym[k] - exact[k]
      if opts.rel then d = (exact[k] ~= 0) and d / math.abs(exact[k]) * 100 or 0 / 0 end
      e[k] = d
    end
    spec.series[i] = { x = xs, y = e, label = m.name }
  end
  -- knots of the first model as marks on the zero line
  local kx = knots_of(list[1].model)
  if kx then
    spec.marks = {}
    for k = 1, #kx do spec.marks[k] = { x = kx[k], y = 0 } end
    spec.marks_label = "knots (" .. list[1].name .. ")"
  end
  return spec
end

--- Series from table rows (a sweep): one series per y key.
-- @tparam {table,...} rows
-- @tparam string xkey
-- @tparam {string,...}|string ykeys
-- @treturn {table,...} series, ready for spec.series
function M.rows(rows, xkey, ykeys, labels)
  local F = "segwise.plot.series_from_rows"
  if type(rows) ~= "table" then error(F .. ": rows must be a list of tables", 2) end
  if type(ykeys) == "string" then ykeys = { ykeys } end
  local function get(row, key, r)
    if type(row) ~= "table" then error(fmt("%s: row %d must be a table", F, r), 4) end
    local v = row[key]
    if type(key) == "function" then v = key(row)
    elseif v == nil and type(key) == "string" and key:find(".", 1, true) then
      v = row                                  -- "i.DIODE" reads row.i.DIODE, as in report.table
      for part in key:gmatch("[^.]+") do v = type(v) == "table" and v[part] or nil end
    end
    return type(v) == "number" and v or 0 / 0
  end
  local series = {}
  for j, key in ipairs(ykeys) do
    local xs, ys = {}, {}
    for r, row in ipairs(rows) do
      xs[r] = get(row, xkey, r)
      ys[r] = get(row, key, r)
    end
    series[j] = { x = xs, y = ys, label = labels and labels[j] or numtext.str(key) }
  end
  return series
end

return M
