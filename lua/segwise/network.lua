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
return function(sw, core)
  local util = require "segwise.util"
  local check_opts, check_number = util.check_opts, util.check_number

  local Network = {}
  Network.__index = Network

  local Op = {}
  Op.__index = Op
  -- print(op) in a REPL shows the operating-point table
  Op.__tostring = function(op) return require("segwise.report").op_table(op) end

  local function name_arg(fname, what, v)
    if type(v) == "number" then return tostring(v) end
    if type(v) ~= "string" or v == "" then
      error(("segwise.%s: %s must be a non-empty string (got %s)"):format(fname, what, type(v)), 3)
    end
    return v
  end

  local function node_arg(fname, what, v)
    if type(v) == "number" then
      if v ~= v then error(("segwise.%s: %s is NaN"):format(fname, what), 3) end
      return tostring(v)
    end
    return name_arg(fname, what, v)
  end

  -- The C method's error at the caller's level (see util.call).
  local function call(fname, f, ...) return util.call(2, fname, f, ...) end

  -- numbers used as node names index results as strings too
  local by_string = { __index = function(t, k) if type(k) == "number" then return rawget(t, tostring(k)) end end }

  function sw.network()
    return setmetatable({ _c = core.net_new(), _values = {}, _devices = {}, _kinds = {} }, Network)
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

  function Network:resistor(name, a, b, ohms) return add(self, "network:resistor", "r", name, { a, b }, nil, ohms, "ohms") end
  function Network:vsource(name, p, m, volts) return add(self, "network:vsource", "v", name, { p, m }, nil, volts, "volts") end
  function Network:isource(name, from, to, amps) return add(self, "network:isource", "i", name, { from, to }, nil, amps, "amps") end
  function Network:vcvs(name, p, m, cp, cm, gain) return add(self, "network:vcvs", "vcvs", name, { p, m, cp, cm }, nil, gain, "gain") end
  function Network:vccs(name, from, to, cp, cm, gm) return add(self, "network:vccs", "vccs", name, { from, to, cp, cm }, nil, gm, "gm") end
  function Network:ccvs(name, p, m, ctrl, r)
    return add(self, "network:ccvs", "ccvs", name, { p, m }, name_arg("network:ccvs", "ctrl", ctrl), r, "r")
  end
  function Network:cccs(name, from, to, ctrl, gain)
    return add(self, "network:cccs", "cccs", name, { from, to }, name_arg("network:cccs", "ctrl", ctrl), gain, "gain")
  end

  -- PWL device: model gives i(v) (x = "v", the default) or v(i) (x = "i").
  function Network:element(name, a, b, model, opts)
    name = name_arg("network:element", "name", name)
    a = node_arg("network:element", "node 1", a)
    b = node_arg("network:element", "node 2", b)
    if not sw.is_model(model) then
      error(("segwise.network:element: %s: model must be a segwise model (got %s)"):format(name, type(model)), 2)
    end
    opts = check_opts("network:element", opts, { x = { "v", "i" }, exact = "userdata", pmax = "number" })
    if opts.pmax ~= nil then check_number("network:element", "pmax", opts.pmax) end
    call("network:element", self._c.device, self._c, name, a, b, model, opts.x == "i", opts.pmax or 0, opts.exact)
    self._devices[#self._devices + 1] = name
    self._kinds[name] = "element"
    return self
  end

  function Network:set(name, value)
    name = name_arg("network:set", "name", name)
    check_number("network:set", name, value)
    call("network:set", self._c.set, self._c, name, value)
    self._values[name] = value
    return self
  end

  function Network:segments(name) return self._c:segments(name_arg("network:segments", "name", name)) end
  function Network:info() return self._c:info() end
  function Network:free() self._c:free() end

  ---------------------------------------------------------------- trace text
  local function fmt(x) return ("%.6g"):format(x) end

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

  local function trace_text(self, attempts)
    local info = self:info()
    local xof = {}
    for _, e in ipairs(info.elements) do if e.kind == "element" then xof[e.name] = e.x end end
    for k, a in ipairs(attempts) do
      local lines, assume = {}, {}
      for _, d in ipairs(self._devices) do
        local xn = xof[d]
        assume[#assume + 1] = ("%s on segment %d (%s)"):format(d, a.state[d], seg_text(self, d, a.state[d], xn, xn == "v" and "V" or "A"))
      end
      lines[1] = ("attempt %d: assume %s"):format(k, table.concat(assume, ", "))
      if a.event == "singular" then
        lines[#lines + 1] = "  the equations of this assumption are singular: no unique solution"
      else
        local moved = {}
        for _, d in ipairs(self._devices) do
          local xn, ex = xof[d], a.excess[d]
          local unit = xn == "v" and "V" or "A"
          local verdict
          if ex == 0 then verdict = "inside its segment"
          elseif ex > 0 then verdict = ("outside: %s above the segment's end by %s %s"):format(xn, fmt(ex), unit)
          else verdict = ("outside: %s below the segment's start by %s %s"):format(xn, fmt(-ex), unit) end
          lines[#lines + 1] = ("  %s: v = %s V, i = %s A -> %s"):format(d, fmt(a.v[d]), fmt(a.i[d]), verdict)
          local nxt = attempts[k + 1]
          if nxt and nxt.state[d] ~= a.state[d] then moved[#moved + 1] = ("%s -> segment %d"):format(d, nxt.state[d]) end
        end
        if a.event == "cycle" then
          lines[#lines + 1] = "  moving every violator would repeat an earlier assumption (a cycle): from here on only the worst device moves, one segment at a time"
        end
        if #moved > 0 then lines[#lines + 1] = "  re-assign: " .. table.concat(moved, ", ")
        elseif k == #attempts and a.event == "solved" then
          local allin = true
          for _, d in ipairs(self._devices) do if a.excess[d] ~= 0 then allin = false end end
          if allin then lines[#lines + 1] = "  every device lies inside its assumed segment: the state is consistent" end
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
  local function range_warning(e, op)
    local x = e.x == "i" and op.i[e.name] or op.vd[e.name]
    if x == nil then return nil end
    local slack = 1e-9 * math.max(math.abs(e.lo), math.abs(e.hi), 1e-300)
    if x < e.lo - slack or x > e.hi + slack then
      return ("%s operates at %s = %s, outside its model's knots [%s, %s]: the model is extrapolated there, so refit over a range that covers this point"):format(
        e.name, e.x, fmt(x), fmt(e.lo), fmt(e.hi))
    end
  end

  local function finish_op(self, op, info, elements)
    op = setmetatable(op, Op)
    setmetatable(op.v, by_string)
    op.devices = { table.unpack(self._devices) }
    op.method = info and info.method
    op.warnings = {}
    if info and info.nfound and info.nfound > 1 then
      op.warnings[#op.warnings + 1] = ("%d operating points exist; this is one of them (net:solve_all() lists every one)"):format(info.nfound)
    end
    for _, e in ipairs(elements or self:info().elements) do
      if e.kind == "element" then
        if e.pmax > 0 and math.abs(op.p[e.name]) > e.pmax then
          op.warnings[#op.warnings + 1] = ("%s dissipates %s W, above its pmax rating of %s W: as the README cautions, a device driven beyond its rating leaves the range its model describes and may be damaged, so this operating point cannot be trusted"):format(e.name, fmt(math.abs(op.p[e.name])), fmt(e.pmax))
        end
        op.warnings[#op.warnings + 1] = range_warning(e, op)
      end
    end
    return op
  end

  -- lowrank = false: the assumed-state method refactorises its m x m system
  -- at every change of state instead of a Sherman-Morrison-Woodbury update
  -- (same answers; for measuring what the updates save).
  local SOLVE_OPTS = { method = { "auto", "assumed", "enumerate", "lcp" }, start = "table", trace = "boolean",
                       exact = "boolean", max_states = "number", max_iter = "number", lowrank = "boolean" }

  function Network:solve(opts)
    opts = check_opts("network:solve", opts, SOLVE_OPTS)
    local method = opts.method or "auto"
    if opts.trace and method == "auto" then method = "assumed" end
    if opts.trace and method ~= "assumed" then
      error("segwise.network:solve: trace = true records the assumed-state method; use method = \"assumed\"", 2)
    end
    local ok, op, info = pcall(self._c.solve, self._c, method, opts.start, opts.trace, opts.max_states, opts.exact, opts.max_iter, opts.lowrank)
    if not ok then
      if type(op) == "table" then
        error(op.error .. "\nwhat was tried:\n" .. tostring(trace_text(self, op)), 2)
      end
      if type(op) == "string" then op = op:gsub("^[^\n]-:%d+: ", "") end
      error(op, 2)
    end
    op = finish_op(self, op, info)
    op.pmatrix, op.pmatrix_test, op.nfound = info.pmatrix, info.pmatrix_test, info.nfound
    op.lowrank_updates = info.lowrank_updates
    if info.trace then op.trace = trace_text(self, info.trace) end
    return op
  end

  function Network:solve_all(opts)
    opts = check_opts("network:solve_all", opts, { max_states = "number" })
    local list = call("network:solve_all", self._c.solve_all, self._c, opts.max_states)
    local elements = self:info().elements
    for k, op in ipairs(list) do list[k] = finish_op(self, op, { method = "enumerate" }, elements) end
    return list
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
        w.message = ("%s operates outside its model's knots [%s, %s] %s: the model is extrapolated there, so refit over a range that covers these points"):format(
          w.device, fmt(e.lo), fmt(e.hi), where)
      else
        w.message = ("%s dissipates more than its pmax rating of %s W %s: a device driven beyond its rating leaves the range its model describes, so these points cannot be trusted"):format(
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
    opts = check_opts("network:sweep", opts, { start = "table", max_states = "number", out = "table", lowrank = "boolean" })
    if opts.out then
      local res = call("network:sweep", self._c.sweep_arrays, self._c, name, values, opts.start, opts.max_states, opts.out, opts.lowrank)
      res.n = res[1] and #res[1] or 0
      loop_warnings(self, res, function(n, first, last)
        return ("at %d of %d points (indices %d..%d; first at %s = %s)"):format(n, #values, first, last, name, fmt(values[first]))
      end)
      return res
    end
    local rows = call("network:sweep", self._c.sweep, self._c, name, values, opts.start, opts.max_states, opts.lowrank)
    local elements = self:info().elements
    for k, op in ipairs(rows) do rows[k] = finish_op(self, op, { method = "sweep" }, elements) end
    return rows
  end

  -- min, max, mean and (sample) standard deviation of an array, by
  -- Welford's update (no cancellation when the spread is small)
  local function array_stats(a)
    local n, mean, m2, lo, hi = 0, 0, 0, math.huge, -math.huge
    for i = 1, #a do
      local x = a[i]
      n = n + 1
      local d = x - mean
      mean = mean + d / n
      m2 = m2 + d * (x - mean)
      if x < lo then lo = x end
      if x > hi then hi = x end
    end
    return { min = lo, max = hi, mean = mean, sd = n > 1 and math.sqrt(m2 / (n - 1)) or 0 }
  end

  -- Every corner of the given ranges {name = {lo, hi}, ...}; min and max of
  -- each element's branch voltage, current and power over the corners.
  function Network:corners(ranges, opts)
    if type(ranges) ~= "table" then error("segwise.network:corners: expected a table {name = {lo, hi}, ...}", 2) end
    opts = check_opts("network:corners", opts, { method = { "auto", "assumed", "enumerate", "lcp" }, max_states = "number" })
    local names = {}
    for name, r in pairs(ranges) do
      if type(name) ~= "string" or self._values[name] == nil then
        error(("segwise.network:corners: no source, gain or resistor named '%s'"):format(tostring(name)), 2)
      end
      if type(r) ~= "table" or type(r[1]) ~= "number" or type(r[2]) ~= "number" then
        error(("segwise.network:corners: %s must be {lo, hi}"):format(name), 2)
      end
      names[#names + 1] = name
    end
    table.sort(names)
    if #names > 20 then error("segwise.network:corners: more than 20 ranges (2^20 corners)", 2) end
    local keep = {}
    for _, n in ipairs(names) do keep[n] = self._values[n] end
    local box = { corners = {}, min = { v = {}, i = {}, p = {} }, max = { v = {}, i = {}, p = {} } }
    local ok, err = pcall(function()
      for mask = 0, (1 << #names) - 1 do
        local values = {}
        for b, n in ipairs(names) do
          values[n] = ranges[n][((mask >> (b - 1)) & 1) + 1]
          self:set(n, values[n])
        end
        local op = self:solve { method = opts.method, max_states = opts.max_states }
        box.corners[#box.corners + 1] = { values = values, op = op }
        for name, v in pairs(op.vd) do
          for key, val in pairs { v = v, i = op.i[name], p = op.p[name] } do
            if box.min[key][name] == nil or val < box.min[key][name] then box.min[key][name] = val end
            if box.max[key][name] == nil or val > box.max[key][name] then box.max[key][name] = val end
          end
        end
      end
    end)
    for n, v in pairs(keep) do self:set(n, v) end
    if not ok then error(err, 2) end
    return box
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
    if type(vary) ~= "table" then error("segwise.network:montecarlo: expected a table {name = tol, ...}", 2) end
    opts = check_opts("network:montecarlo", opts, { runs = "number", seed = "number", max_states = "number", out = "table" })
    local names, tols, gauss = {}, {}, {}
    for name in pairs(vary) do
      if type(name) ~= "string" then error("segwise.network:montecarlo: keys must be element names", 2) end
      names[#names + 1] = name
    end
    table.sort(names)
    for k, name in ipairs(names) do
      local t = vary[name]
      if type(t) == "number" then tols[k], gauss[k] = t, false
      elseif type(t) == "table" and (t.tol ~= nil) ~= (t.sd ~= nil) then
        tols[k], gauss[k] = t.tol or t.sd, t.sd ~= nil
      else
        error(("segwise.network:montecarlo: %s must be a tolerance, {tol = t} or {sd = s}"):format(name), 2)
      end
      check_number("network:montecarlo", name .. " tolerance", tols[k])
      if tols[k] < 0 then error(("segwise.network:montecarlo: %s tolerance must be >= 0"):format(name), 2) end
    end
    local runs = opts.runs or 1000
    if runs ~= math.floor(runs) then error("segwise.network:montecarlo: runs must be an integer", 2) end
    runs = math.tointeger(runs)
    local seed = math.tointeger(opts.seed or 1) or 1
    if opts.out then
      local res = call("network:montecarlo", self._c.montecarlo_arrays, self._c, names, tols, gauss, runs, seed,
        opts.max_states, opts.out)
      res.n = runs
      res.stats = {}
      for k, q in ipairs(opts.out) do res.stats[q] = array_stats(res[k]) end
      loop_warnings(self, res, function(n, first, last)
        return ("in %d of %d runs (runs %d..%d)"):format(n, runs, first, last)
      end)
      return res
    end
    local list = call("network:montecarlo", self._c.montecarlo, self._c, names, tols, gauss, runs, seed, opts.max_states)
    local out = { runs = list, min = { v = {}, i = {}, p = {} }, max = { v = {}, i = {}, p = {} },
                  mean = { v = {}, i = {}, p = {} }, sd = { v = {}, i = {}, p = {} } }
    local s1, s2 = { v = {}, i = {}, p = {} }, { v = {}, i = {}, p = {} }
    local elements = self:info().elements
    for k, op in ipairs(list) do
      list[k] = finish_op(self, op, { method = "montecarlo" }, elements)
      for name, v in pairs(op.vd) do
        for key, val in pairs { v = v, i = op.i[name], p = op.p[name] } do
          if out.min[key][name] == nil or val < out.min[key][name] then out.min[key][name] = val end
          if out.max[key][name] == nil or val > out.max[key][name] then out.max[key][name] = val end
          s1[key][name] = (s1[key][name] or 0) + val
          s2[key][name] = (s2[key][name] or 0) + val * val
        end
      end
    end
    for key in pairs(s1) do
      for name, a in pairs(s1[key]) do
        local mean = a / #list
        out.mean[key][name] = mean
        out.sd[key][name] = #list > 1 and math.sqrt(math.max(0, (s2[key][name] - #list * mean * mean) / (#list - 1))) or 0
      end
    end
    return out
  end

  function Network:__tostring()
    local info = self:info()
    local lines = { ("network: %d nodes (reference \"0\"), %d elements"):format(#info.nodes, #info.elements) }
    for _, e in ipairs(info.elements) do
      local what
      if e.kind == "element" then
        what = ("PWL device, %d segments, model gives %s"):format(e.nseg, e.x == "v" and "i(v)" or "v(i)")
        if e.pmax > 0 then what = what .. (", pmax %s W"):format(fmt(e.pmax)) end
      elseif e.kind == "resistor" then what = fmt(e.value) .. " ohm"
      elseif e.kind == "vsource" then what = fmt(e.value) .. " V"
      elseif e.kind == "isource" then what = fmt(e.value) .. " A"
      elseif e.kind == "vcvs" or e.kind == "vccs" then
        what = ("gain %s controlled by V(%s) - V(%s)"):format(fmt(e.value), e.nodes[3], e.nodes[4])
      else what = ("gain %s controlled by the current of %s"):format(fmt(e.value), e.ctrl) end
      lines[#lines + 1] = ("  %-8s %-8s %s -> %s  %s"):format(e.name, e.kind, e.nodes[1], e.nodes[2], what)
    end
    return table.concat(lines, "\n")
  end

  ---------------------------------------------------------------- comparing
  -- Device by device: absolute and relative differences of v and i.
  function sw.compare_ops(a, b)
    if type(a) ~= "table" or type(b) ~= "table" or not a.devices or not b.devices then
      error("segwise.compare_ops: expected two operating points from net:solve", 2)
    end
    local out, worst = {}, { dv = 0, di = 0, rel_v = 0, rel_i = 0 }
    local function rel(d, x, y)
      local s = math.max(math.abs(x), math.abs(y))
      return s > 0 and d / s or 0
    end
    for _, name in ipairs(a.devices) do
      if b.vd[name] == nil then error(("segwise.compare_ops: device %s is missing from the second point"):format(name), 2) end
      local r = { v_a = a.vd[name], v_b = b.vd[name], i_a = a.i[name], i_b = b.i[name] }
      r.dv, r.di = math.abs(r.v_a - r.v_b), math.abs(r.i_a - r.i_b)
      r.rel_v, r.rel_i = rel(r.dv, r.v_a, r.v_b), rel(r.di, r.i_a, r.i_b)
      for k in pairs(worst) do if r[k] > worst[k] then worst[k] = r[k] end end
      out[name] = r
    end
    out.max = worst
    return out
  end

  function Op:diff(other) return sw.compare_ops(self, other) end
end
