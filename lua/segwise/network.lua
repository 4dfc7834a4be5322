-- Networks of linear elements and PWL devices: argument shaping, the
-- readable trace of the assumed-state method, warnings, corners and the
-- comparison of two operating points.  Every numeric step runs in C
-- (csrc/core/net/ through csrc/bind/net.c).
--
-- Automatic method (method = "auto", the default): one device -> its load
-- line against every segment (all crossings found; the first is returned and
-- a warning tells how many exist); more devices -> the assumed-state
-- iteration from the start states, then Lemke's LCP, then enumeration of
-- every state (when within max_states).  The error lists what was tried.
local core = require "segwise.core"
local util = require "segwise.util"
local check_opts, check_number = util.check_opts, util.check_number

-- The names this module adds to sw: network, compare_ops.
local M = {}

local Network = {}
Network.__index = Network

local Op = {}
Op.__index = Op
-- print(op) in a REPL shows the operating-point table
Op.__tostring = function(op) return require("segwise.report").op_table(op) end

local function fmt(x) return ("%.6g"):format(x) end

-- A name given as a number: a whole number names what its digits name (1
-- and 1.0 are both "1"); any other number is refused, since its printed
-- form would round (0.1 + 0.2 prints as 0.3).
local function number_name(fname, what, v)
  local k = math.tointeger(v)
  if not k then
    util.raise(("segwise.%s: %s must be a string or a whole number (got %s)"):format(fname,
      what, tostring(v)))
  end
  return tostring(k)
end

-- A name: non-empty, without NUL bytes (C would cut "a\0b" to "a").
local function name_arg(fname, what, v)
  if type(v) == "number" then return number_name(fname, what, v) end
  if type(v) ~= "string" or v == "" then
    error(("segwise.%s: %s must be a non-empty string (got %s)"):format(fname, what, type(v)), 3)
  end
  if v:find("\0", 1, true) then
    util.raise(("segwise.%s: %s contains a NUL byte (%q)"):format(fname, what, v))
  end
  return v
end

local function node_arg(fname, what, v)
  if type(v) == "number" then
    if v ~= v then error(("segwise.%s: %s is NaN"):format(fname, what), 3) end
    return number_name(fname, what, v)
  end
  return name_arg(fname, what .. " name", v)
end

-- The C method's error at the caller's level (see util.call).
local function call(fname, f, ...) return util.call(fname, f, ...) end

-- numbers used as node names index results as strings too
local by_string = {
  __index = function(t, k)
    local n = type(k) == "number" and math.tointeger(k)
    if n then return rawget(t, tostring(n)) end
  end
}

function M.network()
  return setmetatable({ _c = core.net_new(), _values = {}, _devices = {}, _kinds = {}, _exact = {},
    _ratings = {}, _active = {}, _stated = {} }, Network)
end

local function add(self, fname, kind, name, nodes, ctrl, value, unit)
  name = name_arg(fname, "name", name)
  for k = 1, #nodes do nodes[k] = node_arg(fname, ("node %d"):format(k), nodes[k]) end
  check_number(fname, unit, value, 3)
  call(fname, self._c.add, self._c, kind, name, nodes[1], nodes[2], nodes[3], nodes[4], ctrl, value)
  self._values[name] = value
  self._kinds[name] = kind
  return self
end

-- Ratings of resistors and sources ({pmax = W}, and {imax = A} on a
-- voltage source): an operating point above them gets a caution, as a
-- device's pmax does.
local RATINGS = {
  ["network:resistor"] = { pmax = "number" },
  ["network:vsource"] = { pmax = "number", imax = "number" },
  ["network:isource"] = { pmax = "number" },
}
local function rate(self, fname, name, opts)
  opts = check_opts(fname, opts, RATINGS[fname])
  for k, v in pairs(opts) do
    check_number(fname, k, v, 3)
    if not (v > 0) then
      error(("segwise.%s: %s (%s) must be positive"):format(fname, k, fmt(v)), 3)
    end
  end
  self._ratings[name_arg(fname, "name", name)] = next(opts) and opts or nil
end

function Network:resistor(name, a, b, ohms, opts)
  rate(self, "network:resistor", name, opts)
  return add(self, "network:resistor", "r", name, { a, b }, nil, ohms, "ohms")
end
function Network:vsource(name, p, m, volts, opts)
  rate(self, "network:vsource", name, opts)
  return add(self, "network:vsource", "v", name, { p, m }, nil, volts, "volts")
end
function Network:isource(name, from, to, amps, opts)
  rate(self, "network:isource", name, opts)
  return add(self, "network:isource", "i", name, { from, to }, nil, amps, "amps")
end
function Network:vcvs(name, p, m, cp, cm, gain)
  return add(self, "network:vcvs", "vcvs", name, { p, m, cp, cm }, nil, gain, "gain")
end
function Network:vccs(name, from, to, cp, cm, gm)
  return add(self, "network:vccs", "vccs", name, { from, to, cp, cm }, nil, gm, "gm")
end
function Network:ccvs(name, p, m, ctrl, r)
  return add(self, "network:ccvs", "ccvs", name, { p, m },
    name_arg("network:ccvs", "ctrl", ctrl), r, "r")
end
function Network:cccs(name, from, to, ctrl, gain)
  return add(self, "network:cccs", "cccs", name, { from, to },
    name_arg("network:cccs", "ctrl", ctrl), gain, "gain")
end

-- PWL device: model gives i(v) (x = "v", the default) or v(i) (x = "i").
function Network:element(name, a, b, model, opts)
  name = name_arg("network:element", "name", name)
  a = node_arg("network:element", "node 1", a)
  b = node_arg("network:element", "node 2", b)
  if not util.is_model(model) then
    error(("segwise.network:element: %s: model must be a segwise model (got %s)"):format(
      name, type(model)), 2)
  end
  opts = check_opts("network:element", opts,
    { x = { "v", "i" }, exact = "userdata", pmax = "number", active = "boolean" })
  if opts.pmax ~= nil then check_number("network:element", "pmax", opts.pmax) end
  call("network:element", self._c.device, self._c, name, a, b, model, opts.x == "i",
    opts.pmax or 0, opts.exact)
  self._devices[#self._devices + 1] = name
  self._kinds[name] = "element"
  self._exact[name] = opts.exact ~= nil
  -- active: the device may deliver power (a solar cell), so negative
  -- absorbed power is no sign of a model artefact
  self._active[name] = opts.active or nil
  self._stated[name] = model:fit_info() -- the model's stated error, when it was fitted
  return self
end

function Network:set(name, value)
  name = name_arg("network:set", "name", name)
  check_number("network:set", name, value)
  call("network:set", self._c.set, self._c, name, value)
  self._values[name] = value
  return self
end

function Network:segments(name)
  return self._c:segments(name_arg("network:segments", "name", name))
end
function Network:info() return self._c:info() end
function Network:free() self._c:free() end

---------------------------------------------------------------- trace text

local function seg_text(self, dev, label, xname, unit)
  for _, s in ipairs(self:segments(dev)) do
    if s.label == label then
      if s.lo == -math.huge and s.hi == math.huge then return ("all %s"):format(xname) end
      if s.lo == -math.huge then return ("%s <= %s %s"):format(xname, fmt(s.hi), unit) end
      if s.hi == math.huge then return ("%s >= %s %s"):format(xname, fmt(s.lo), unit) end
      return ("%s %s <= %s <= %s %s"):format(fmt(s.lo), unit, xname, fmt(s.hi), unit)
    end
  end
  return "?"
end

-- What happened at attempt k: "converged" (every device inside its
-- segment), "moved" (devices left their segments: a.moves lists
-- {device, from, to}), "cycle" (moving every violator would repeat an
-- earlier assumption, so one device moved one segment), "singular" (no
-- unique solution) or "stopped" (devices outside and no further attempt:
-- the error says why).  The C trace only tells solved/singular/cycle.
local function attempt_event(self, attempts, k)
  local a, nxt = attempts[k], attempts[k + 1]
  a.moves = {}
  if a.event == "singular" then return "singular" end
  for _, d in ipairs(self._devices) do
    if nxt and nxt.state[d] ~= a.state[d] then
      a.moves[#a.moves + 1] = { device = d, from = a.state[d], to = nxt.state[d] }
    end
  end
  local outside = false
  for _, d in ipairs(self._devices) do if a.excess[d] ~= 0 then outside = true end end
  if not outside then return "converged" end
  if #a.moves == 0 then return "stopped" end
  return a.event == "cycle" and "cycle" or "moved"
end

local function trace_text(self, attempts)
  for k = 1, #attempts do attempts[k].event = attempt_event(self, attempts, k) end
  local info = self:info()
  local xof = {}
  for _, e in ipairs(info.elements) do if e.kind == "element" then xof[e.name] = e.x end end
  for k, a in ipairs(attempts) do
    local lines, assume = {}, {}
    for _, d in ipairs(self._devices) do
      local xn = xof[d]
      assume[#assume + 1] = ("%s on segment %d (%s)"):format(d, a.state[d],
        seg_text(self, d, a.state[d], xn, xn == "v" and "V" or "A"))
    end
    lines[1] = ("attempt %d: assume %s"):format(k, table.concat(assume, ", "))
    if a.event == "singular" then
      lines[#lines + 1] = "  the equations of this assumption are singular: no unique solution"
    else
      for _, d in ipairs(self._devices) do
        local xn, ex = xof[d], a.excess[d]
        local unit = xn == "v" and "V" or "A"
        local verdict
        if ex == 0 then
          verdict = "inside its segment"
        elseif ex > 0 then
          verdict = ("outside: %s above the segment's end by %s %s"):format(xn, fmt(ex), unit)
        else
          verdict = ("outside: %s below the segment's start by %s %s"):format(xn, fmt(-ex), unit)
        end
        lines[#lines + 1] = ("  %s: v = %s V, i = %s A -> %s"):format(d, fmt(a.v[d]),
          fmt(a.i[d]), verdict)
      end
      if a.event == "cycle" then
        lines[#lines + 1] = "  moving every violator would repeat an earlier assumption "
          .. "(a cycle): from here on only the worst device moves, one segment at a time"
      end
      local moved = {}
      for _, mv in ipairs(a.moves) do
        moved[#moved + 1] = ("%s -> segment %d"):format(mv.device, mv.to)
      end
      if #moved > 0 then lines[#lines + 1] = "  re-assign: " .. table.concat(moved, ", ")
      elseif a.event == "converged" then
        lines[#lines + 1] =
          "  every device lies inside its assumed segment: the state is consistent"
      end
    end
    a.text = table.concat(lines, "\n")
  end
  return setmetatable(attempts, { __tostring = function(t)
    local out = {}
    for _, a in ipairs(t) do out[#out + 1] = a.text end
    return table.concat(out, "\n")
  end })
end

---------------------------------------------------------------- solving
-- Devices operating beyond their model's knots run on an extrapolated
-- segment: the model was not fitted there, so say so.
-- A caution: its text in op.warnings and, at the same index, what a
-- printed report needs to group many alike (see report.op_table):
-- {kind, element, group = "<plural phrase>", worst = how bad (larger is
-- worse), detail = the case in a few words}.
local function caution(op, message, d)
  op.warnings[#op.warnings + 1] = message
  op.warning_info[#op.warnings] = d or { kind = "other" }
end

local function range_caution(e, op)
  local x = e.x == "i" and op.i[e.name] or op.vd[e.name]
  if x == nil then return end
  local slack = 1e-9 * math.max(math.abs(e.lo), math.abs(e.hi), 1e-300)
  if x < e.lo - slack or x > e.hi + slack then
    local beyond = x < e.lo and e.lo - x or x - e.hi
    caution(op, ("%s operates at %s = %s, outside its model's knots [%s, %s]: the model is "
      .. "extrapolated there, so refit over a range that covers this point"):format(
      e.name, e.x, fmt(x), fmt(e.lo), fmt(e.hi)),
      { kind = "range", element = e.name, group = "devices operate outside their model's knots",
        worst = beyond / math.max(e.hi - e.lo, 1e-300),
        detail = ("(%s = %s, knots [%s, %s])"):format(e.x, fmt(x), fmt(e.lo), fmt(e.hi)) })
  end
end

local function pmax_caution(e, op)
  local p = math.abs(op.p[e.name])
  if e.pmax > 0 and p > e.pmax then
    caution(op, ("%s dissipates %s W, above its pmax rating of %s W: as the README cautions, "
      .. "a device driven beyond its rating leaves the range its model describes and may be "
      .. "damaged, so this operating point cannot be trusted"):format(e.name, fmt(p),
      fmt(e.pmax)),
      { kind = "pmax", element = e.name, group = "devices dissipate above their pmax rating",
        worst = p / e.pmax, detail = ("(%s W, rated %s W)"):format(fmt(p), fmt(e.pmax)) })
  end
end

-- A passive device absorbing negative power: its model is not passive
-- there (a minimax line through a diode gives a small negative current
-- just above 0 V), so the answer is an artefact of the model.
local function passivity_caution(self, e, op)
  local p = op.p[e.name]
  if self._active[e.name] or p == nil or not (p < 0) then return end
  local v, i = op.vd[e.name], op.i[e.name]
  if v == nil or i == nil or v == 0 or i == 0 then return end
  caution(op, ("%s absorbs negative power (%s W at v = %s V, i = %s A): its model is not "
    .. "passive there, so this part of the answer is an artefact of the model (refit so the "
    .. "model passes through 0, or mark a device that delivers power with active = true)"):format(
    e.name, fmt(p), fmt(v), fmt(i)),
    { kind = "passivity", element = e.name, group = "devices absorb negative power",
      worst = -p, detail = ("(%s W)"):format(fmt(p)) })
end

-- The device's y quantity (i for an i(v) model, v for v(i)) is not well
-- above the model's stated error: the answer is within the model's noise.
local NOISE_FACTOR = 10
-- The stated error at y: absolute, or for a relative fit max_rel of
-- max(|y|, rel_floor).
local function stated_error(fi, y)
  if fi.error == "rel" then
    if not fi.max_rel then return nil end
    return fi.max_rel * math.max(math.abs(y), fi.rel_floor or 0)
  end
  return fi.max_abs
end
local function noise_caution(self, e, op)
  local fi = self._stated[e.name]
  local y = e.x == "i" and op.vd[e.name] or op.i[e.name]
  local err = fi and y ~= nil and stated_error(fi, y)
  if not err or err <= 0 or math.abs(y) >= NOISE_FACTOR * err then return end
  local q, unit = e.x == "i" and "v" or "i", e.x == "i" and "V" or "A"
  caution(op, ("%s operates at %s = %s %s, less than %d times its model's stated error (%s %s): "
    .. "the answer is within the model's noise there; %s"):format(
    e.name, q, fmt(y), unit, NOISE_FACTOR, fmt(err), unit,
    fi.error == "rel" and "a smaller rel_floor keeps values this small accurate"
      or "refit with error = \"rel\" to keep small values accurate"),
    { kind = "noise", element = e.name, group = "devices operate within their model's error",
      worst = err / math.max(math.abs(y), 1e-300),
      detail = ("(%s = %s %s, error %s %s)"):format(q, fmt(y), unit, fmt(err), unit) })
end

-- Resistors and sources above their own ratings.
local function rating_cautions(self, op)
  local names = {}
  for name in pairs(self._ratings) do names[#names + 1] = name end
  table.sort(names)
  for _, name in ipairs(names) do
    local r, p, i = self._ratings[name], op.p[name], op.i[name]
    if r.pmax and p and math.abs(p) > r.pmax then
      caution(op, ("%s dissipates %s W, above its pmax rating of %s W: check the part's "
        .. "rating and its derating with temperature"):format(name, fmt(math.abs(p)), fmt(r.pmax)),
        { kind = "pmax", element = name, group = "elements dissipate above their pmax rating",
          worst = math.abs(p) / r.pmax,
          detail = ("(%s W, rated %s W)"):format(fmt(math.abs(p)), fmt(r.pmax)) })
    end
    if r.imax and i and math.abs(i) > r.imax then
      caution(op, ("%s carries %s A, above its current limit imax of %s A"):format(
        name, fmt(math.abs(i)), fmt(r.imax)),
        { kind = "imax", element = name, group = "sources carry more than their imax",
          worst = math.abs(i) / r.imax,
          detail = ("(%s A, limit %s A)"):format(fmt(math.abs(i)), fmt(r.imax)) })
    end
  end
end

local function finish_op(self, op, info, elements)
  op = setmetatable(op, Op)
  setmetatable(op.v, by_string)
  op.devices = { table.unpack(self._devices) }
  op.method = info and info.method
  op.warnings, op.warning_info = {}, {}
  if info and info.nfound and info.nfound > 1 then
    caution(op, ("%d operating points exist; this is one of them "
      .. "(net:solve_all() lists every one)"):format(info.nfound), { kind = "several" })
  end
  for _, e in ipairs(elements or self:info().elements) do
    if e.kind == "element" then
      pmax_caution(e, op)
      range_caution(e, op)
      passivity_caution(self, e, op)
      noise_caution(self, e, op)
    end
  end
  rating_cautions(self, op)
  return op
end

-- exact = true: the devices without an exact curve keep their PWL model
-- in the Newton solve; with none, the answer would be the PWL point
-- labelled exact, so that is refused.
local function without_exact(self)
  local missing = {}
  for _, d in ipairs(self._devices) do
    if not self._exact[d] then missing[#missing + 1] = d end
  end
  if #missing > 0 and #missing == #self._devices then
    error(("segwise.network:solve: exact = true needs an exact curve, and no device has one "
      .. "(%s): give net:element(name, a, b, model, {exact = curve})"):format(
      table.concat(missing, ", ")), 3)
  end
  return missing
end

local function exact_caution(op, missing)
  if #missing == 0 then return end
  local one = #missing == 1
  caution(op, ("exact = true: %s %s no exact curve, so %s PWL model stands in for the exact "
    .. "law; that part of the answer is the PWL one"):format(
    table.concat(missing, ", "), one and "has" or "have", one and "its" or "their"),
    { kind = "exact" })
end

-- A point the solver returns may be one a real circuit cannot rest at.
local function stability_caution(op)
  if op.stability ~= "unstable" then return end
  caution(op, ("this operating point is unstable (%s method): with a small capacitance "
    .. "across each device the circuit drifts away from it, so a real circuit does not rest "
    .. "here; net:solve_all() lists the stable points"):format(
    op.method or "solve"), { kind = "unstable" })
end

-- lowrank = false: the assumed-state method refactorises its m x m system
-- at every change of state instead of a Sherman-Morrison-Woodbury update
-- (same answers; for measuring what the updates save).
local SOLVE_OPTS = { method = { "auto", "assumed", "enumerate", "lcp" }, start = "table",
                     trace = "boolean", exact = "boolean", max_states = "number",
                     max_iter = "number", lowrank = "boolean" }

---------------------------------------------------------------- continua
-- One device whose load line lies along one of its segments: every point
-- of that segment between the two ends found is an operating point.  Two
-- points on the same straight load line and on the same segment line make
-- the lines one, so two found points at a segment's two ends prove it.
local function on_segment(s, x, y)
  local span = math.max(math.abs(s.lo), math.abs(s.hi), math.abs(s.hi - s.lo), 1e-300)
  local yy = s.slope * x + s.intercept
  return math.abs(y - yy) <= 1e-9 * math.max(math.abs(y), math.abs(yy), 1e-300) + 1e-15,
    math.abs(x - s.lo) <= 1e-9 * span, math.abs(x - s.hi) <= 1e-9 * span
end

local function continua(self, ops)
  if #self._devices ~= 1 or #ops < 2 then return {} end
  local name = self._devices[1]
  local e
  for _, el in ipairs(self:info().elements) do if el.name == name then e = el end end
  local function xy(op)
    if e.x == "i" then return op.i[name], op.vd[name] end
    return op.vd[name], op.i[name]
  end
  local found = {}
  for _, s in ipairs(self._c:segments(name)) do
    local a, b
    for k, op in ipairs(ops) do
      local x, y = xy(op)
      local on, at_lo, at_hi = on_segment(s, x, y)
      if on and at_lo then a = k elseif on and at_hi then b = k end
    end
    if a and b then
      found[#found + 1] = { first = a, last = b, lo = s.lo, hi = s.hi, segment = s.label,
        x = e.x, device = name }
    end
  end
  return found
end

local function continuum_caution(op, c)
  local unit = c.x == "i" and "A" or "V"
  op.continuum = { lo = c.lo, hi = c.hi, segment = c.segment, x = c.x }
  op.unique = false
  op.unique_reason = ("a continuum of operating points: %s anywhere from %s = %s to %s %s (the "
    .. "load line lies along its segment %d)"):format(c.device, c.x, fmt(c.lo), fmt(c.hi), unit,
    c.segment)
  caution(op, ("%s has a continuum of operating points, %s from %s to %s %s: the load line lies "
    .. "along its segment %d, so the circuit does not fix the point; this one is an end of it")
    :format(c.device, c.x, fmt(c.lo), fmt(c.hi), unit, c.segment),
    { kind = "continuum", element = c.device, group = "devices with a continuum of points",
      worst = 1, detail = ("(%s in [%s, %s])"):format(c.x, fmt(c.lo), fmt(c.hi)) })
end

-- Drops the cautions of one kind (a continuum is not "several points").
local function drop_cautions(op, kind)
  local w, wi = {}, {}
  for k, text in ipairs(op.warnings) do
    if op.warning_info[k].kind ~= kind then w[#w + 1], wi[#w + 1] = text, op.warning_info[k] end
  end
  op.warnings, op.warning_info = w, wi
end

function Network:solve(opts)
  opts = check_opts("network:solve", opts, SOLVE_OPTS)
  local method = opts.method or "auto"
  if opts.trace and method == "auto" then method = "assumed" end
  if opts.trace and method ~= "assumed" then
    error("segwise.network:solve: trace = true records the assumed-state method; "
      .. "use method = \"assumed\"", 2)
  end
  local missing = opts.exact and without_exact(self) or {}
  local ok, op, info = pcall(self._c.solve, self._c, method, opts.start, opts.trace,
    opts.max_states, opts.exact, opts.max_iter, opts.lowrank)
  if not ok then
    if type(op) == "table" then
      error(op.error .. "\nwhat was tried:\n" .. tostring(trace_text(self, op)), 2)
    end
    if type(op) == "string" then op = op:gsub("^[^\n]-:%d+: ", "") end
    error(op, 2)
  end
  op = finish_op(self, op, info)
  if #self._devices == 1 and (info.nfound or 0) > 1 and not opts.exact then
    local name = self._devices[1]
    for _, other in ipairs(self:solve_all { max_states = opts.max_states }) do
      local c = other.continuum
      local x = c and (c.x == "i" and op.i[name] or op.vd[name])
      local span = c and 1e-9 * math.max(math.abs(c.lo), math.abs(c.hi), c.hi - c.lo, 1e-300)
      if c and x >= c.lo - span and x <= c.hi + span then
        drop_cautions(op, "several")
        continuum_caution(op, { lo = c.lo, hi = c.hi, segment = c.segment, x = c.x,
          device = name })
        info.nfound = other.nfound -- the continuum counts once
      end
    end
  end
  exact_caution(op, missing)
  stability_caution(op)
  -- a count from the methods that count (load line, enumeration); 0 from
  -- the assumed-state method and Lemke, which stop at the first point
  op.pmatrix, op.pmatrix_test = info.pmatrix, info.pmatrix_test
  op.nfound = info.nfound or 0
  op.lowrank_updates = info.lowrank_updates
  if info.trace then op.trace = trace_text(self, info.trace) end
  return op
end

function Network:solve_all(opts)
  opts = check_opts("network:solve_all", opts, { max_states = "number" })
  local list = call("network:solve_all", self._c.solve_all, self._c, opts.max_states)
  local elements = self:info().elements
  for k, op in ipairs(list) do list[k] = finish_op(self, op, { method = "enumerate" }, elements) end
  -- a continuum is one result: its first end stands for it
  local drop = {}
  for _, c in ipairs(continua(self, list)) do
    continuum_caution(list[c.first], c)
    drop[c.last] = true
  end
  local out = {}
  for k, op in ipairs(list) do if not drop[k] then out[#out + 1] = op end end
  for _, op in ipairs(out) do op.nfound = #out end
  return out
end

-- Warnings of an array loop (sweep or Monte Carlo): one per device and
-- kind, naming the points.
-- where(n, first, last): the text saying which points a warning covers
local function loop_warnings(self, res, where_of)
  local elements = {}
  for _, e in ipairs(self:info().elements) do elements[e.name] = e end
  local mt = { __tostring = function(w) return w.message end }
  for _, w in ipairs(res.warnings) do
    local e, idx = elements[w.device], w.indices
    local n, first, last = #idx, math.tointeger(idx[1]), math.tointeger(idx[#idx])
    local where = where_of(n, first, last)
    w.count = n
    if w.kind == "range" then
      w.message = ("%s operates outside its model's knots [%s, %s] %s: the model is "
        .. "extrapolated there, so refit over a range that covers these points"):format(
        w.device, fmt(e.lo), fmt(e.hi), where)
    else
      w.message = ("%s dissipates more than its pmax rating of %s W %s: a device driven "
        .. "beyond its rating leaves the range its model describes, so these points cannot "
        .. "be trusted"):format(
        w.device, fmt(e.pmax), where)
    end
    setmetatable(w, mt)
  end
end

-- Without opts.out: one operating point (a table) per value.  With
-- opts.out = {"i.D1", "vd.D1", "p.D1", "v.a", "state.D1", ...}: one
-- sw.array per quantity, filled by a C loop that allocates nothing per
-- point (see the sweep notes in docs/API.md and csrc/core/net/net_sweep.c).
function Network:sweep(name, values, opts)
  name = name_arg("network:sweep", "name", name)
  opts = check_opts("network:sweep", opts,
    { start = "table", max_states = "number", out = "table", lowrank = "boolean" })
  if opts.out then
    local res = call("network:sweep", self._c.sweep_arrays, self._c, name, values, opts.start,
      opts.max_states, opts.out, opts.lowrank)
    res.n = res[1] and #res[1] or 0
    loop_warnings(self, res, function(n, first, last)
      return ("at %d of %d points (indices %d..%d; first at %s = %s)"):format(n, #values,
        first, last, name, fmt(values[first]))
    end)
    return res
  end
  local rows = call("network:sweep", self._c.sweep, self._c, name, values, opts.start,
    opts.max_states, opts.lowrank)
  local elements = self:info().elements
  for k, op in ipairs(rows) do rows[k] = finish_op(self, op, { method = "sweep" }, elements) end
  return rows
end

-- Streaming min, max, mean and (sample) standard deviation by Welford's
-- update: no cancellation when the spread is small against the mean,
-- where sum(x^2) - n*mean^2 loses every digit.  Both Monte Carlo forms
-- use it.
local function running()
  return { n = 0, mean = 0, m2 = 0, min = math.huge, max = -math.huge }
end

local function push(st, x)
  st.n = st.n + 1
  local d = x - st.mean
  st.mean = st.mean + d / st.n
  st.m2 = st.m2 + d * (x - st.mean)
  if x < st.min then st.min = x end
  if x > st.max then st.max = x end
end

local function sd_of(st) return st.n > 1 and math.sqrt(st.m2 / (st.n - 1)) or 0 end

local function array_stats(a)
  local st = running()
  for i = 1, #a do push(st, a[i]) end
  return { min = st.min, max = st.max, mean = st.mean, sd = sd_of(st) }
end

-- At most this many corners (the product of the level counts).
local MAX_CORNERS = 1 << 20

-- The names and level lists of net:corners, checked; the corner count is
-- the product of the list lengths, capped before anything is solved.
local function corner_levels(self, ranges)
  local names, count, factors = {}, 1.0, {}
  for name, r in pairs(ranges) do
    if type(name) ~= "string" or self._values[name] == nil then
      error(("segwise.network:corners: no source, gain or resistor named '%s'")
        :format(tostring(name)), 3)
    end
    if (type(r) ~= "table" and not util.is_array(r)) or #r == 0 then
      error(("segwise.network:corners: %s must be a list of values ({lo, hi} or {v1, v2, ...})")
        :format(name), 3)
    end
    for k = 1, #r do check_number("network:corners", ("%s[%d]"):format(name, k), r[k], 3) end
    names[#names + 1] = name
  end
  table.sort(names)
  for _, n in ipairs(names) do
    count = count * #ranges[n]
    factors[#factors + 1] = tostring(#ranges[n])
  end
  if count > MAX_CORNERS then
    error(("segwise.network:corners: %s = %.0f corners, more than the cap of %d (2^20): "
      .. "use fewer levels or net:montecarlo"):format(table.concat(factors, " x "), count,
      MAX_CORNERS), 3)
  end
  return names, math.tointeger(count)
end

-- The values of corner c (0-based), in mixed radix over the level lists:
-- the first name (sorted) steps fastest.
local function corner_values(ranges, names, c)
  local values = {}
  for _, n in ipairs(names) do
    local levels = ranges[n]
    values[n] = levels[c % #levels + 1]
    c = c // #levels
  end
  return values
end

local function widen(box, op)
  for name, v in pairs(op.vd) do
    for key, val in pairs { v = v, i = op.i[name], p = op.p[name] } do
      if box.min[key][name] == nil or val < box.min[key][name] then box.min[key][name] = val end
      if box.max[key][name] == nil or val > box.max[key][name] then box.max[key][name] = val end
    end
  end
end

-- Every combination of the given levels {name = {v1, v2, ...}, ...}
-- ({lo, hi}: the two-level case); min and max of each element's branch
-- voltage, current and power over the corners.
function Network:corners(ranges, opts)
  if type(ranges) ~= "table" then
    error("segwise.network:corners: expected a table {name = {lo, hi}, ...}", 2)
  end
  opts = check_opts("network:corners", opts,
    { method = { "auto", "assumed", "enumerate", "lcp" }, max_states = "number" })
  local names, count = corner_levels(self, ranges)
  local keep = {}
  for _, n in ipairs(names) do keep[n] = self._values[n] end
  local box = { corners = {}, min = { v = {}, i = {}, p = {} }, max = { v = {}, i = {}, p = {} } }
  local ok, err = pcall(function()
    for c = 0, count - 1 do
      local values = corner_values(ranges, names, c)
      for _, n in ipairs(names) do self:set(n, values[n]) end
      local op = self:solve { method = opts.method, max_states = opts.max_states }
      box.corners[#box.corners + 1] = { values = values, op = op }
      widen(box, op)
    end
  end)
  for n, v in pairs(keep) do self:set(n, v) end
  if not ok then error(err, 2) end
  return box
end

-- A drawn value is nominal * (1 + t*u).  A resistance must stay
-- positive: uniform u in [-1, 1] reaches 1 - t, so t < 1; a normal u has
-- no bound, so the rule is that a draw 6 sd below nominal must still be
-- positive (s < 1/6: a non-positive draw has a probability below about
-- 1e-9 per run, Phi(-6) = 9.9e-10).
local MAX_SD_POSITIVE = 1 / 6

local function check_positive_spread(self, name, t, gauss)
  if self._kinds[name] ~= "r" then return end
  if not gauss and t >= 1 then
    error(("segwise.network:montecarlo: %s tolerance %s can draw a resistance of 0 or below "
      .. "(nominal * (1 - %s)); a resistor's tolerance must be below 1"):format(name, fmt(t),
      fmt(t)), 4)
  end
  if gauss and t >= MAX_SD_POSITIVE then
    error(("segwise.network:montecarlo: %s sd %s: a normal draw %s sd below nominal is a "
      .. "resistance of 0 or below; a resistor's relative sd must be below 1/6 (then such a "
      .. "draw has a probability below about 1e-9 per run)"):format(name, fmt(t),
      fmt(1 / t)), 4)
  end
end

-- The names (sorted), tolerances and kinds (normal or not) of a vary table.
local function spreads(self, vary)
  local names, tols, gauss = {}, {}, {}
  for name in pairs(vary) do
    if type(name) ~= "string" then
      error("segwise.network:montecarlo: keys must be element names", 3)
    end
    names[#names + 1] = name
  end
  table.sort(names)
  for k, name in ipairs(names) do
    local t = vary[name]
    if type(t) == "table" then
      check_opts("network:montecarlo: " .. name, t, { tol = "number", sd = "number" },
        "option", 4)
    end
    if type(t) == "number" then tols[k], gauss[k] = t, false
    elseif type(t) == "table" and (t.tol ~= nil) ~= (t.sd ~= nil) then
      tols[k], gauss[k] = t.tol or t.sd, t.sd ~= nil
    else
      error(("segwise.network:montecarlo: %s must be a tolerance, {tol = t} or {sd = s}")
        :format(name), 3)
    end
    check_number("network:montecarlo", name .. " tolerance", tols[k], 3)
    if tols[k] < 0 then
      error(("segwise.network:montecarlo: %s tolerance must be >= 0"):format(name), 3)
    end
    check_positive_spread(self, name, tols[k], gauss[k])
  end
  return names, tols, gauss
end

-- Runs of one study, and the largest seed (32 bits).
local MAX_RUNS, MAX_SEED = 100000000, 4294967295

-- Table form: per element and quantity (v, i, p), the running statistics
-- of every run, then min, max, mean and sd as tables by element.
local function run_stats(list)
  local acc = { v = {}, i = {}, p = {} }
  for _, op in ipairs(list) do
    for name, v in pairs(op.vd) do
      for key, val in pairs { v = v, i = op.i[name], p = op.p[name] } do
        acc[key][name] = acc[key][name] or running()
        push(acc[key][name], val)
      end
    end
  end
  local out = { min = {}, max = {}, mean = {}, sd = {} }
  for key, by_name in pairs(acc) do
    for _, f in ipairs { "min", "max", "mean", "sd" } do out[f][key] = {} end
    for name, st in pairs(by_name) do
      out.min[key][name], out.max[key][name], out.mean[key][name] = st.min, st.max, st.mean
      out.sd[key][name] = sd_of(st)
    end
  end
  return out
end

-- Seeded Monte Carlo (GSL's MT19937 in C):
--   net:montecarlo({R1 = 0.05, VB = {sd = 0.02}}, {runs = 1000, seed = 1})
-- a number or {tol = t}: uniform within +-t relative; {sd = s}: normal with
-- relative standard deviation s.  Returns {runs = {op...} (each with
-- .values), min, max, mean, sd = {v = {}, i = {}, p = {}}} per element.
--   net:montecarlo(vary, {runs = 1e5, out = {"i.D1", "p.D1"}}): no table
-- per run but one sw.array per quantity (as net:sweep's out), the drawn
-- values as arrays in res.values, and res.stats[quantity] = {min, max,
-- mean, sd}.
function Network:montecarlo(vary, opts)
  if type(vary) ~= "table" then
    error("segwise.network:montecarlo: expected a table {name = tol, ...}", 2)
  end
  opts = check_opts("network:montecarlo", opts,
    { runs = "number", seed = "number", max_states = "number", out = "table" })
  local names, tols, gauss = spreads(self, vary)
  local runs = math.tointeger(opts.runs or 1000)
  if not runs or runs < 1 or runs > MAX_RUNS then
    error(("segwise.network:montecarlo: runs must be a whole number in 1..%d (got %s)"):format(
      MAX_RUNS, tostring(opts.runs)), 2)
  end
  -- GSL's MT19937 takes the low 32 bits of its seed: larger seeds would
  -- silently repeat smaller ones, and a fraction would be cut
  local seed = math.tointeger(opts.seed or 1)
  if not seed or seed < 0 or seed > MAX_SEED then
    error(("segwise.network:montecarlo: seed must be a whole number in 0..%d (got %s)"):format(
      MAX_SEED, tostring(opts.seed)), 2)
  end
  if opts.out then
    local res = call("network:montecarlo", self._c.montecarlo_arrays, self._c, names, tols,
      gauss, runs, seed, opts.max_states, opts.out)
    res.n = runs
    res.stats = {}
    for k, q in ipairs(opts.out) do res.stats[q] = array_stats(res[k]) end
    loop_warnings(self, res, function(n, first, last)
      return ("in %d of %d runs (runs %d..%d)"):format(n, runs, first, last)
    end)
    return res
  end
  local list = call("network:montecarlo", self._c.montecarlo, self._c, names, tols, gauss,
    runs, seed, opts.max_states)
  local elements = self:info().elements
  for k, op in ipairs(list) do
    list[k] = finish_op(self, op, { method = "montecarlo" }, elements)
  end
  local out = run_stats(list)
  out.runs = list
  return out
end

function Network:__tostring()
  local info = self:info()
  local lines = { ("network: %d nodes (reference \"0\"), %d elements"):format(#info.nodes,
    #info.elements) }
  for _, e in ipairs(info.elements) do
    local what
    if e.kind == "element" then
      what = ("PWL device, %d segments, model gives %s"):format(e.nseg,
        e.x == "v" and "i(v)" or "v(i)")
      if e.pmax > 0 then what = what .. (", pmax %s W"):format(fmt(e.pmax)) end
    elseif e.kind == "resistor" then what = fmt(e.value) .. " ohm"
    elseif e.kind == "vsource" then what = fmt(e.value) .. " V"
    elseif e.kind == "isource" then what = fmt(e.value) .. " A"
    elseif e.kind == "vcvs" or e.kind == "vccs" then
      what = ("gain %s controlled by V(%s) - V(%s)"):format(fmt(e.value), e.nodes[3], e.nodes[4])
    else what = ("gain %s controlled by the current of %s"):format(fmt(e.value), e.ctrl) end
    lines[#lines + 1] = ("  %-8s %-8s %s -> %s  %s"):format(e.name, e.kind, e.nodes[1],
      e.nodes[2], what)
  end
  return table.concat(lines, "\n")
end

---------------------------------------------------------------- comparing
-- Device by device: absolute and relative differences of v and i.
function M.compare_ops(a, b)
  if type(a) ~= "table" or type(b) ~= "table" or not a.devices or not b.devices then
    error("segwise.compare_ops: expected two operating points from net:solve", 2)
  end
  local out, worst = {}, { dv = 0, di = 0, rel_v = 0, rel_i = 0 }
  local function rel(d, x, y)
    local s = math.max(math.abs(x), math.abs(y))
    return s > 0 and d / s or 0
  end
  for _, name in ipairs(a.devices) do
    if b.vd[name] == nil then
      error(("segwise.compare_ops: device %s is missing from the second point"):format(name), 2)
    end
    local r = { v_a = a.vd[name], v_b = b.vd[name], i_a = a.i[name], i_b = b.i[name] }
    r.dv, r.di = math.abs(r.v_a - r.v_b), math.abs(r.i_a - r.i_b)
    r.rel_v, r.rel_i = rel(r.dv, r.v_a, r.v_b), rel(r.di, r.i_a, r.i_b)
    for k in pairs(worst) do if r[k] > worst[k] then worst[k] = r[k] end end
    out[name] = r
  end
  out.max = worst
  return out
end

function Op:diff(other) return M.compare_ops(self, other) end

return M
