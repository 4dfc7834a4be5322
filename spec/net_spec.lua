-- Networks: building, every solving method, errors, sweeps, corners and
-- the safety of models and curves held by a network.
local sw = require "segwise"
local H = require "helpers.net"
H.assert = assert

-- A diode-like model: off below 0.6 V, 10 ohm above (i in A, v in V).
local function knee() return sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 0, 0.02 } } end

-- E -> R -> node a -> device -> ground
local function one_device(e, r, model, opts)
  local net = sw.network()
  net:vsource("E", "in", "0", e)
  net:resistor("R", "in", "a", r)
  net:element("DIODE", "a", "0", model or knee(), opts)
  return net
end

describe("segwise.network", function()
  describe("building", function()
    it("lists the circuit readably", function()
      local net = one_device(5, 1000)
      local s = tostring(net)
      assert.truthy(s:find("E%s+vsource%s+in %-> 0%s+5 V"))
      assert.truthy(s:find("R%s+resistor%s+in %-> a%s+1000 ohm"))
      assert.truthy(s:find("DIODE%s+element%s+a %-> 0%s+PWL device, 2 segments"))
    end)

    it("accepts numbers as node names and 'gnd' as the reference", function()
      local net = sw.network()
      net:vsource("E", 1, "gnd", 2)
      net:resistor("RSER", 1, 2, 100)
      net:resistor("RLOAD", 2, 0, 100)
      local op = net:solve()
      -- voltage divider: 2 V * 100 / 200 (hand algebra)
      assert.is.near(1.0, op.v[2], 1e-14)
      assert.is.near(1.0, op.v["2"], 1e-14)
      assert.are.equal(0, op.v.gnd)
      H.check_kirchhoff(net, op)
    end)

    it("rejects duplicate names, bad values and unknown options", function()
      local net = one_device(5, 1000)
      assert.has_error(function() net:resistor("R", "a", "0", 10) end,
        "segwise.network:add: duplicate element name 'R'")
      assert.has_error(function() net:resistor("RBAD", "a", "0", 0 / 0) end)
      assert.has_error(function() net:resistor("RBAD", "a", "0", -5) end)
      assert.has_error(function() net:resistor("RBAD", "a", "0", math.huge) end)
      assert.has_error(function() net:element("DIODE2", "a", "0", knee(), { colour = 1 }) end)
      assert.has_error(function() net:element("DIODE2", "a", "0", {}, nil) end)
      assert.has_error(function() net:solve { mehtod = "lcp" } end)
      assert.has_error(function() net:solve { method = "magic" } end)
    end)

    it("keeps working after the model is freed or collected (it holds a copy and a "
      .. "reference)", function()
      local m = knee()
      local net = one_device(5, 1000, m)
      m:free()
      m = nil
      collectgarbage(); collectgarbage()
      local op = net:solve()
      -- 5 = 1000 i + v, i = 0.1 (v - 0.6)  =>  v = 65/101 (hand algebra)
      assert.is.near(65 / 101, op.vd.DIODE, 1e-13)
    end)
  end)

  describe("topology errors", function()
    it("names floating nodes", function()
      local net = one_device(5, 1000)
      net:resistor("Rf1", "x", "y", 10)
      net:resistor("Rf2", "y", "x", 20)
      local ok, err = pcall(net.solve, net)
      assert.is_false(ok)
      assert.truthy(err:find("floating nodes x, y"))
    end)

    it("names a loop of voltage sources", function()
      local net = one_device(5, 1000)
      net:vsource("VTOP", "in", "m", 1)
      net:vsource("VBOT", "m", "0", 4)
      local ok, err = pcall(net.solve, net)
      assert.is_false(ok)
      assert.truthy(err:find("voltage sources form a loop"))
      assert.truthy(err:find("VBOT") and err:find("VTOP") and err:find("E"))
    end)

    it("names a cut of current sources", function()
      local net = one_device(5, 1000)
      net:isource("ISRC", "0", "p", 1e-3)
      net:isource("ISRC2", "p", "q", 1e-3)
      net:resistor("Rq", "q", "p", 10)
      local ok, err = pcall(net.solve, net)
      assert.is_false(ok)
      assert.truthy(err:find("current sources ISRC form a cut"))
      assert.truthy(err:find("nodes p, q"))
    end)

    it("names a dangling node", function()
      local net = one_device(5, 1000)
      net:resistor("Rd", "a", "tip", 10)
      local ok, err = pcall(net.solve, net)
      assert.is_false(ok)
      assert.truthy(err:find("node 'tip' is dangling: only Rd connects to it"))
    end)

    it("names unknown elements in set and sweep", function()
      local net = one_device(5, 1000)
      assert.has_error(function() net:set("RX", 3) end,
        "segwise.network:set: no element named 'RX'")
      assert.has_error(function() net:sweep("RX", { 1, 2 }) end,
        "segwise.network:sweep: no element named 'RX'")
      assert.has_error(function() net:set("DIODE", 3) end)
      assert.has_error(function() net:set("R", 0 / 0) end)
    end)

    it("names the missing control element of a current-controlled source", function()
      local net = one_device(5, 1000)
      net:cccs("MIRROR", "a", "0", "VX", 2)
      local ok, err = pcall(net.solve, net)
      assert.is_false(ok)
      assert.truthy(err:find("no element named 'VX'"))
    end)
  end)

  describe("no consistent state", function()
    -- a device whose model ends at 1 V (extend = "error") across a 5 V source
    local function impossible()
      local net = sw.network()
      net:vsource("E", "a", "0", 5)
      net:element("DIODE", "a", "0",
        sw.pwl { x = { 0, 0.5, 1 }, y = { 0, 0.001, 0.01 }, extend = "error" })
      return net
    end
    it("solve raises an error saying so and what was tried", function()
      local net = impossible()
      for _, m in ipairs { "auto", "enumerate", "assumed" } do
        local ok, err = pcall(net.solve, net, { method = m })
        assert.is_false(ok)
        assert.truthy(err:find("consistent") or err:find("cycles"), err)
      end
      local ok, err = pcall(net.solve, net, { method = "assumed", trace = true })
      assert.is_false(ok)
      assert.truthy(err:find("what was tried:\nattempt 1: assume DIODE on segment 1", 1, true), err)
    end)
    it("solve_all returns an empty list", function()
      assert.are.same({}, impossible():solve_all())
    end)
  end)

  describe("method agreement on a two-device circuit", function()
    local function two()
      local net = sw.network()
      net:vsource("E", "in", "0", 3)
      net:resistor("RSER", "in", "a", 100)
      net:element("DIODE", "a", "b", knee())
      net:element("DIODE2", "b", "0", knee())
      net:resistor("RLOAD", "b", "0", 1000)
      return net
    end
    it("assumed, enumerate, lcp and auto give the same point, satisfying Kirchhoff", function()
      local net = two()
      local ref = net:solve { method = "enumerate" }
      H.check_kirchhoff(net, ref)
      for _, m in ipairs { "assumed", "lcp", "auto" } do
        local op = net:solve { method = m }
        H.check_kirchhoff(net, op)
        for _, d in ipairs { "DIODE", "DIODE2" } do
          assert.is.near(ref.vd[d], op.vd[d], 1e-12)
          assert.is.near(ref.i[d], op.i[d], 1e-14)
          assert.are.equal(ref.state[d], op.state[d])
        end
      end
      local lcp = net:solve { method = "lcp" }
      assert.is_true(lcp.pmatrix)
      assert.are.equal("all principal minors positive", lcp.pmatrix_test)
    end)
    it("honours start states and traces every attempt", function()
      local op = two():solve { method = "assumed", start = { DIODE = 2, DIODE2 = 2 }, trace = true }
      assert.are.equal(1, #op.trace)   -- both conduct: the first guess holds
      assert.truthy(op.trace[1].text:find("every device lies inside its assumed segment"))
      local op2 = two():solve { method = "assumed", trace = true }
      assert.is_true(#op2.trace >= 2)
      assert.truthy(tostring(op2.trace):find("re%-assign: DIODE %-> segment 2"))
      assert.has_error(function() two():solve { start = { DIODE = 7 } } end)
      assert.has_error(function() two():solve { start = { DX = 1 } } end)
    end)
    it("reports the cap on enumerated states with the count", function()
      local ok, err = pcall(two().solve, two(), { method = "enumerate", max_states = 3 })
      assert.is_false(ok)
      assert.truthy(err:find("4 combinations of segments exceed max_states = 3"))
    end)
  end)

  describe("low-rank updates", function()
    it("assumed-state attempts after the first reuse the factorisation "
      .. "(Sherman-Morrison-Woodbury) and agree with Lemke", function()
      local net = sw.network()
      net:vsource("E", "s", "0", 5)
      net:resistor("RS", "s", "n1", 100)
      for k = 1, 16 do
        net:resistor("RG" .. k, "n" .. k, "0", 2000)
        net:resistor("RC" .. k, "n" .. k, "n" .. (k + 1), 150)
        net:element("DIODE" .. k, "n" .. (k + 1), "0",
          sw.pwl { x = { 0, 0.3, 0.6, 0.9 }, y = { 0, 3e-4, 1.5e-3, 4.2e-3 } })
      end
      local op = net:solve { method = "assumed" }
      assert.is_true(op.iterations >= 2)
      assert.is_true(op.lowrank_updates >= 1)
      local ref = net:solve { method = "lcp" }
      for k = 1, 16 do
        assert.is.near(ref.vd["DIODE" .. k], op.vd["DIODE" .. k], 1e-12)
        assert.are.equal(ref.state["DIODE" .. k], op.state["DIODE" .. k])
      end
      H.check_kirchhoff(net, op)
    end)
  end)

  describe("devices given as v(i)", function()
    it("solve a vertical knee (an ideal-diode-like zener) exactly", function()
      -- v(i): 0 A..1 A at exactly 5.1 V, flat in v: a vertical segment in i(v) terms
      local z = sw.pwl { x = { -1, 0, 1 }, y = { -1, 5.1, 5.1 } }
      local net = one_device(12, 100, z, { x = "i" })
      local op = net:solve()
      -- 12 V through 100 ohm into a 5.1 V clamp: i = 6.9/100 (hand algebra)
      assert.is.near(5.1, op.vd.DIODE, 1e-13)
      assert.is.near(0.069, op.i.DIODE, 1e-15)
      H.check_kirchhoff(net, op)
    end)
  end)

  describe("model extension rules", function()
    it("held ends add flat segments numbered 0 and nseg + 1", function()
      -- i(v) held at 0.02 A above 0.8 V: a current limiter
      local lim = sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 0, 0.02 }, extend = "hold" }
      local net = one_device(10, 100, lim)
      local op = net:solve()
      assert.are.equal(3, op.state.DIODE)
      assert.is.near(0.02, op.i.DIODE, 1e-16)
      assert.is.near(10 - 100 * 0.02, op.vd.DIODE, 1e-13)   -- hand algebra
      H.check_kirchhoff(net, op)
      local neg = one_device(-1, 100, lim):solve()
      assert.are.equal(0, neg.state.DIODE)
      assert.is.near(-1, neg.vd.DIODE, 1e-15)               -- no current below 0 V
    end)
    it("lcp refuses discontinuous models and names the jump", function()
      local jump = sw.pwl.segments { { lo = 0, hi = 1, slope = 0.001, intercept = 0 },
                                     { lo = 1, hi = 2, slope = 0.001, intercept = 0.01 } }
      local net = one_device(5, 1000, jump)
      local ok, err = pcall(net.solve, net, { method = "lcp" })
      assert.is_false(ok)
      assert.truthy(err:find("device DIODE has a jump at x = 1"))
      -- the other methods handle the jump: 5 = 1000 i + v on segment 2,
      -- i = 0.001 v + 0.01  =>  v = -5/2 (outside), segment 1: v = 5/2 (outside:
      -- hi = 1); none fits; enumerate says so
      local ok2, err2 = pcall(net.solve, net, { method = "enumerate" })
      assert.is_false(ok2)
      assert.truthy(err2:find("no consistent state exists"))
    end)
  end)

  describe("several operating points", function()
    local function tunnel(e)
      local net = sw.network()
      net:vsource("E", "in", "0", e)
      net:resistor("R", "in", "a", 50)
      net:element("DIODE", "a", "0",
        sw.pwl { x = { 0, 0.1, 0.3, 0.5 }, y = { 0, 0.01, 0.002, 0.02 } })
      return net
    end
    it("the start states choose which point the assumed method lands on", function()
      local net = tunnel(0.5)
      -- crossings at E/6, 0.7 - E, (E + 1.25)/5.5 (hand algebra, see the reference spec)
      assert.is.near(0.5 / 6,
        net:solve { method = "assumed", start = { DIODE = 1 } }.vd.DIODE, 1e-14)
      assert.is.near(1.75 / 5.5,
        net:solve { method = "assumed", start = { DIODE = 3 } }.vd.DIODE, 1e-14)
    end)
    it("a warm-started sweep shows hysteresis on a bistable circuit", function()
      local net = tunnel(0)
      local up, down = {}, {}
      for k = 0, 10 do up[#up + 1] = 0.1 * k end
      for k = 10, 0, -1 do down[#down + 1] = 0.1 * k end
      local ru, rd = net:sweep("E", up), net:sweep("E", down)
      -- at E = 0.5 V the upward sweep stays on the low branch (segment 1),
      -- the downward one on the high branch (segment 3)
      assert.are.equal(1, ru[6].state.DIODE)
      assert.are.equal(3, rd[6].state.DIODE)
      assert.is.near(0.5 / 6, ru[6].vd.DIODE, 1e-14)
      assert.is.near(1.75 / 5.5, rd[6].vd.DIODE, 1e-14)
    end)
  end)

  describe("controlled sources", function()
    it("a VCVS amplifier and a CCCS mirror follow hand algebra", function()
      local net = sw.network()
      net:vsource("VIN", "in", "0", 0.1)
      net:resistor("RI", "in", "0", 1000)
      net:vcvs("AMP", "out", "0", "in", "0", 20)
      net:resistor("RL", "out", "0", 200)
      net:cccs("MIRROR", "0", "m", "RL", 0.5)   -- half of RL's current pushed into m
      net:resistor("RM", "m", "0", 50)
      net:ccvs("SENSE", "h", "0", "VIN", 10)
      net:resistor("RH", "h", "0", 10)
      net:vccs("GM", "0", "g", "in", "0", 0.01)
      net:resistor("RG", "g", "0", 100)
      local op = net:solve()
      assert.is.near(2.0, op.v.out, 1e-14)              -- 20 * 0.1
      assert.is.near(0.5 * 0.01 * 50, op.v.m, 1e-14)   -- 0.5 * (2/200) * 50
      -- VIN's current (in -> through source -> 0) is -0.1/1000
      assert.is.near(10 * -1e-4, op.v.h, 1e-15)
      assert.is.near(0.01 * 0.1 * 100, op.v.g, 1e-14)
      H.check_kirchhoff(net, op)
    end)
    it("a CCCS controlled by a device current mirrors it", function()
      local net = one_device(5, 1000)
      net:cccs("MIRROR", "0", "m", "DIODE", 3)
      net:resistor("RM", "m", "0", 100)
      local op = net:solve()
      assert.is.near(3 * op.i.DIODE * 100, op.v.m, 1e-13)
      assert.is.near((5 - 0.6) / 1010, op.i.DIODE, 1e-15)
      H.check_kirchhoff(net, op)
    end)
  end)

  describe("operating point fields", function()
    it("has v, i, p, state, iterations and warnings (pmax above rating)", function()
      local net = one_device(5, 1000, knee(), { pmax = 1e-3 })
      local op = net:solve()
      assert.is.near(op.vd.DIODE * op.i.DIODE, op.p.DIODE, 1e-18)
      assert.are.equal(2, op.state.DIODE)
      assert.is_true(op.iterations >= 1)
      assert.are.equal(1, #op.warnings)
      assert.truthy(op.warnings[1]:find("DIODE dissipates .* above its pmax rating of 0.001 W"))
      assert.truthy(op.warnings[1]:find("README"))
      -- sources deliver power: negative absorbed power
      assert.is_true(op.p.E < 0)
    end)
  end)

  describe("sweep", function()
    it("matches single solves at every value and warm-starts", function()
      local net = one_device(0, 1000)
      local values = { 0, 0.3, 0.6, 1, 2, 5, 10 }
      local rows = net:sweep("E", values)
      assert.are.equal(#values, #rows)
      for k, e in ipairs(values) do
        -- hand algebra: off (i = 0) while e <= 0.6, else v = (e + 60)/101
        local v = e <= 0.6 and e or (e + 60) / 101
        assert.is.near(v, rows[k].vd.DIODE, 1e-13)
        assert.are.equal(e, rows[k].value)
        net:set("E", e)   -- the element laws are checked against the row's value
        H.check_kirchhoff(net, rows[k])
        net:set("E", 0)
      end
      -- warm start: after the knee each point holds its first guess
      assert.are.equal(1, rows[#rows].iterations)
      -- the swept source is restored
      assert.is.near(0, net:solve().vd.DIODE, 1e-15)
    end)
  end)

  describe("sweep into arrays", function()
    -- Every quantity of an array sweep against the row sweep, point by
    -- point: |a - b| <= rel * max(|b|, 1e-3 * largest |b| of the sweep),
    -- rel = 1e-12 unless told (the array path solves through the port
    -- reduction, the rows through a full LU solve with one refinement step,
    -- so values that should be 0 differ by rounding of the sweep's scale).
    local function same_as_rows(net, name, values, out, opts)
      local rel = opts and opts.rel or 1e-12
      local rows = net:sweep(name, values, { start = opts and opts.start })
      local o = { out = out, start = opts and opts.start, lowrank = opts and opts.lowrank }
      local res = net:sweep(name, values, o)
      local n = #values
      assert.are.equal(n, res.n)
      for j, q in ipairs(out) do
        local kind, what = q:match("^(%a+)%.(.+)$")
        local arr = res[q]
        assert.are.equal(arr, res[j])
        assert.are.equal(n, #arr)
        local scale = 0
        for k = 1, n do scale = math.max(scale, math.abs(rows[k][kind][what])) end
        for k = 1, n do
          local b = rows[k][kind][what]
          if kind == "state" then assert.are.equal(b, arr[k])
          else assert.is.near(b, arr[k], rel * math.max(math.abs(b), 1e-3 * scale) + 1e-300) end
        end
      end
      return res, rows
    end

    -- An operating point rebuilt from the arrays at index k, for the
    -- Kirchhoff checks of helpers.net.
    local function op_at(net, res, k)
      local op = { v = {}, i = {}, vd = {}, p = {}, state = {} }
      for q, arr in pairs(res) do
        if type(q) == "string" and q:find("%.") then
          local kind, what = q:match("^(%a+)%.(.+)$")
          op[kind][what] = arr[k]
        end
      end
      return op
    end

    local function all_out(net)
      local info, out = net:info(), {}
      for _, n in ipairs(info.nodes) do out[#out + 1] = "v." .. n end
      for _, e in ipairs(info.elements) do
        out[#out + 1] = "i." .. e.name
        out[#out + 1] = "vd." .. e.name
        out[#out + 1] = "p." .. e.name
        if e.kind == "element" then out[#out + 1] = "state." .. e.name end
      end
      return out
    end

    it("equals the row sweep on one device across its knee, from a table or an array", function()
      local net = one_device(0, 1000)
      local values = {}
      for k = 1, 201 do values[k] = -1 + 0.05 * (k - 1) end -- -1 .. 9 V, knee at 0.6 V
      local out = all_out(net)
      local res = same_as_rows(net, "E", values, out)
      same_as_rows(net, "E", sw.array(values), out)
      for k, e in ipairs(values) do
        -- hand algebra: off (i = 0) while e <= 0.6, else v = (e + 60)/101
        local v = e <= 0.6 and e or (e + 60) / 101
        assert.is.near(v, res["vd.DIODE"][k], 1e-12)
        if math.abs(e - 0.6) > 1e-9 then
          assert.are.equal(e < 0.6 and 1 or 2, res["state.DIODE"][k])
        end
      end
      -- (conducting points: at rest the currents are rounding noise of the
      -- sweep's scale, which a relative KCL check cannot judge)
      for _, k in ipairs { 40, 50, 120, 201 } do
        net:set("E", values[k])
        H.check_kirchhoff(net, op_at(net, res, k))
      end
      net:set("E", 0)
      -- the swept source is restored; only the knee crossing needed a second attempt
      assert.is.near(0, net:solve().vd.DIODE, 1e-15)
      assert.are.equal(#values + 1, res.iterations)
      -- below 0 V the device runs beyond its first knot: those points, and only those, warn
      assert.are.equal(1, #res.warnings)
      local below = {}
      for k, e in ipairs(values) do if e < -1e-9 then below[#below + 1] = k end end
      assert.are.same(below, res.warnings[1].indices:totable())
    end)

    it("equals the row sweep on several devices changing state, with and without low-rank "
      .. "updates", function()
      -- a ladder: E -> RSEG1 -> n1 -> RSEG2 -> n2 ..., a three-segment device from
      -- every node to ground; raising E turns the devices on one by one
      local net = sw.network()
      net:vsource("E", "n0", "0", 0)
      for j = 1, 6 do
        net:resistor("RSEG" .. j, "n" .. (j - 1), "n" .. j, 200)
        net:element("DIODE" .. j, "n" .. j, "0",
          sw.pwl { x = { 0, 0.5, 0.7, 0.9 }, y = { 0, 1e-4, 2e-3, 1e-2 } })
      end
      local values = {}
      for k = 1, 150 do values[k] = 0.1 * k end
      local out = all_out(net)
      local res = same_as_rows(net, "E", values, out)
      local plain = same_as_rows(net, "E", values, out, { lowrank = false })
      assert.is_true(res.lowrank_updates >= 1)
      assert.are.equal(0, plain.lowrank_updates)
      assert.is_true(plain.refactors > res.refactors)
      -- the states do change along the sweep
      assert.are.equal(1, res["state.DIODE6"][1])
      assert.is_true(res["state.DIODE1"][150] >= 3)
      for _, k in ipairs { 1, 40, 90, 150 } do
        net:set("E", values[k])
        H.check_kirchhoff(net, op_at(net, res, k))
      end
      net:set("E", 0)
    end)

    it("rebuilds the reduction per point when a resistor is swept", function()
      local net = one_device(5, 1000)
      local res = same_as_rows(net, "R", { 10, 100, 1000, 4400, 1e4, 1e5 },
        { "i.DIODE", "vd.DIODE", "state.DIODE", "v.in" })
      -- i = (5 - 0.6) / (R + 10): on at every R since E > 0.6 V (hand algebra)
      for k, r in ipairs { 10, 100, 1000, 4400, 1e4, 1e5 } do
        -- (1e-15 A: the segment line i = 0.1 v - 0.06 cancels near the knee)
        assert.is.near(4.4 / (r + 10), res["i.DIODE"][k], 1e-15)
        assert.are.equal(2, res["state.DIODE"][k])
      end
      assert.is.near(1000, net:info().elements[2].value, 0) -- restored
    end)

    it("warm-starts: hysteresis on a bistable circuit as in the row sweep", function()
      local net = sw.network()
      net:vsource("E", "in", "0", 0)
      net:resistor("R", "in", "a", 50)
      net:element("DIODE", "a", "0",
        sw.pwl { x = { 0, 0.1, 0.3, 0.5 }, y = { 0, 0.01, 0.002, 0.02 } })
      local up, down = {}, {}
      for k = 0, 10 do up[#up + 1] = 0.1 * k end
      for k = 10, 0, -1 do down[#down + 1] = 0.1 * k end
      local ru = same_as_rows(net, "E", up, { "state.DIODE", "vd.DIODE" })
      local rd = same_as_rows(net, "E", down, { "state.DIODE", "vd.DIODE" })
      -- at E = 0.5 V: crossings at E/6 and (E + 1.25)/5.5 (hand algebra); up stays low, down high
      assert.are.equal(1, ru["state.DIODE"][6])
      assert.are.equal(3, rd["state.DIODE"][6])
      assert.is.near(0.5 / 6, ru["vd.DIODE"][6], 1e-14)
      assert.is.near(1.75 / 5.5, rd["vd.DIODE"][6], 1e-14)
      -- a start state picks the branch of the first point
      local hi = same_as_rows(net, "E", { 0.5 }, { "state.DIODE" }, { start = { DIODE = 3 } })
      assert.are.equal(3, hi["state.DIODE"][1])
    end)

    it("names the value and its index when no state is consistent", function()
      -- 1 A forced into a device that carries at most 1 mA: no solution (hand algebra)
      local net = sw.network():isource("I", "0", "a", 0)
      net:element("D", "a", "0", sw.pwl { x = { 0, 1, 2 }, y = { 0, 1e-3, 1e-3 } })
      local ok, err = pcall(net.sweep, net, "I", { 0, 5e-4, 1, 0 }, { out = { "vd.D" } })
      assert.is_false(ok)
      assert.truthy(err:find("^segwise%.network:sweep: point 3 of %d+ %(I = 1%)"), err)
      ok, err = pcall(net.sweep, net, "I", { 0, 5e-4, 1, 0 })
      assert.is_false(ok)
      assert.truthy(err:find("point 3 of %d+ %(I = 1%)"), err)
    end)

    it("rejects unknown quantities, elements and nodes by name", function()
      local net = one_device(5, 1000)
      local function msg(out)
        local ok, err = pcall(net.sweep, net, "E", { 1, 2 }, { out = out })
        assert.is_false(ok)
        return err
      end
      assert.truthy(msg { "i.DIODE", "i.DX" }:find("out%[2%] = 'i.DX': no element named 'DX'"))
      assert.truthy(msg { "v.zz" }:find("out%[1%] = 'v.zz': no node named 'zz'"))
      assert.truthy(msg { "q.DIODE" }:find("out%[1%] = 'q.DIODE': expected"))
      assert.truthy(msg { "state.R" }:find("'R' is not a PWL device"))
      assert.truthy(msg { 3 }:find("out%[1%] must be a string"))
      assert.truthy(msg {}:find("at least one quantity"))
      local ok, err = pcall(net.sweep, net, "E", { 1, 0 / 0 }, { out = { "i.DIODE" } })
      assert.is_false(ok)
      assert.truthy(err:find("values%[2%]"))
    end)

    it("lists warnings with the indices of the points beyond the knots or above pmax", function()
      local net = one_device(0, 1000, knee(), { pmax = 1e-3 })
      local values = { 0, 1, 2, 5, 10, 30, 50 }
      local res, rows = same_as_rows(net, "E", values, { "i.DIODE", "vd.DIODE", "p.DIODE" })
      local by = {}
      for _, w in ipairs(res.warnings) do by[w.kind] = w end
      -- independently: p = v i above 1 mW, v beyond the last knot 0.8 V
      local want = { pmax = {}, range = {} }
      for k = 1, #values do
        local v, i = res["vd.DIODE"][k], res["i.DIODE"][k]
        if v * i > 1e-3 then want.pmax[#want.pmax + 1] = k end
        if v > 0.8 then want.range[#want.range + 1] = k end
      end
      assert.is_true(#want.pmax >= 2 and #want.range >= 1)
      for kind, list in pairs(want) do
        assert.are.equal("DIODE", by[kind].device)
        assert.are.same(list, by[kind].indices:totable())
        assert.are.equal(#list, by[kind].count)
        -- the row sweep warns at exactly these points
        local key, set = kind == "pmax" and "pmax rating" or "outside its model's knots", {}
        for _, q in ipairs(list) do set[q] = true end
        for k = 1, #values do
          local warned = false
          for _, s in ipairs(rows[k].warnings) do if s:find(key, 1, true) then warned = true end end
          assert.are.equal(set[k] == true, warned)
        end
      end
      assert.truthy(tostring(by.pmax):find("DIODE dissipates more than its pmax rating of "
        .. "0.001 W at " .. #want.pmax .. " of 7 points"))
      assert.truthy(tostring(by.range):find("outside its model's knots %[0, 0.8%]"))
    end)

    it("core sweep with three arguments does not read its buffer as the start table", function()
      local net = one_device(5, 1000)
      local rows = net._c:sweep("E", { 1, 2 })
      assert.are.equal(2, #rows)
      assert.is.near((2 - 0.6) / 1010, rows[2].i.DIODE, 1e-15) -- hand algebra
    end)

    it("solve with lowrank = false refactorises instead and lands on the same point", function()
      local net = sw.network()
      net:vsource("E", "n0", "0", 6)
      for j = 1, 8 do
        net:resistor("RSEG" .. j, "n" .. (j - 1), "n" .. j, 200)
        net:element("DIODE" .. j, "n" .. j, "0",
          sw.pwl { x = { 0, 0.5, 0.7, 0.9 }, y = { 0, 1e-4, 2e-3, 1e-2 } })
      end
      local a = net:solve { method = "assumed" }
      local b = net:solve { method = "assumed", lowrank = false }
      assert.are.equal(0, b.lowrank_updates)
      for j = 1, 8 do assert.is.near(a.vd["DIODE" .. j], b.vd["DIODE" .. j], 1e-12) end
      H.check_kirchhoff(net, b)
    end)
  end)

  describe("corners", function()
    it("solves every corner and reports min and max", function()
      local net = one_device(5, 1000)
      local box = net:corners { E = { 4, 6 }, R = { 900, 1100 } }
      assert.are.equal(4, #box.corners)
      -- i = 0.1 (v - 0.6), v = (E + 60 R/1000 ... ) hand algebra per corner:
      -- E = R i + v, i = 0.1 (v - 0.6)  =>  i = (E - 0.6) / (R + 10)
      assert.is.near((4 - 0.6) / 1110, box.min.i.DIODE, 1e-15)
      assert.is.near((6 - 0.6) / 910, box.max.i.DIODE, 1e-15)
      -- values restored
      assert.is.near((5 - 0.6) / 1010, net:solve().i.DIODE, 1e-15)
      assert.has_error(function() net:corners { RX = { 1, 2 } } end)
    end)
  end)

  describe("montecarlo", function()
    it("is seeded, stays inside the corner box and restores values", function()
      local net = one_device(5, 1000)
      local mc = net:montecarlo({ E = 0.1, R = { tol = 0.1 } }, { runs = 200, seed = 7 })
      local mc2 = net:montecarlo({ E = 0.1, R = { tol = 0.1 } }, { runs = 200, seed = 7 })
      assert.are.equal(200, #mc.runs)
      assert.are.equal(mc.runs[17].values.R, mc2.runs[17].values.R)
      local box = net:corners { E = { 4.5, 5.5 }, R = { 900, 1100 } }
      for _, op in ipairs(mc.runs) do
        assert.is_true(op.values.E >= 4.5 and op.values.E <= 5.5)
        -- i = (E - 0.6)/(R + 10) for the drawn values (hand algebra)
        assert.is.near((op.values.E - 0.6) / (op.values.R + 10), op.i.DIODE, 1e-15)
        assert.is_true(op.i.DIODE >= box.min.i.DIODE - 1e-15
          and op.i.DIODE <= box.max.i.DIODE + 1e-15)
      end
      assert.is_true(mc.sd.i.DIODE > 0)
      assert.is_true(mc.mean.i.DIODE > box.min.i.DIODE and mc.mean.i.DIODE < box.max.i.DIODE)
      assert.is.near((5 - 0.6) / 1010, net:solve().i.DIODE, 1e-15)
      local g = net:montecarlo({ R = { sd = 0.01 } }, { runs = 2000, seed = 3 })
      local sum, sq = 0, 0
      for _, op in ipairs(g.runs) do sum = sum + op.values.R; sq = sq + (op.values.R - 1000) ^ 2 end
      -- sample mean and sd of a normal draw, 2000 runs: within ~4 standard errors
      assert.is.near(1000, sum / 2000, 4 * 10 / math.sqrt(2000))
      assert.is.near(10, math.sqrt(sq / 2000), 4 * 10 / math.sqrt(2 * 2000))
      assert.has_error(function() net:montecarlo({ RX = 0.1 }) end)
      assert.has_error(function() net:montecarlo({ R = { tol = 1, sd = 1 } }) end)
    end)

    it("into arrays: the same runs as the tables, with statistics", function()
      local net = one_device(5, 1000)
      local vary = { E = 0.1, R = { sd = 0.05 } }
      local mc = net:montecarlo(vary, { runs = 300, seed = 11 })
      local a = net:montecarlo(vary,
        { runs = 300, seed = 11, out = { "i.DIODE", "vd.DIODE", "p.DIODE", "state.DIODE" } })
      assert.are.equal(300, a.n)
      assert.are.equal(300, #a["i.DIODE"])
      assert.are.equal(a[1], a["i.DIODE"])
      local sum = 0
      for k = 1, 300 do
        local op = mc.runs[k]
        -- the same draws, in the same order, from the same seed
        assert.are.equal(op.values.E, a.values.E[k])
        assert.are.equal(op.values.R, a.values.R[k])
        -- i = (E - 0.6)/(R + 10) for the drawn values (hand algebra)
        assert.is.near((a.values.E[k] - 0.6) / (a.values.R[k] + 10), a["i.DIODE"][k], 1e-15)
        assert.is.near(op.i.DIODE, a["i.DIODE"][k], 1e-15)
        assert.is.near(op.vd.DIODE * op.i.DIODE, a["p.DIODE"][k], 1e-15)
        sum = sum + a["i.DIODE"][k]
      end
      local st = a.stats["i.DIODE"]
      assert.is.near(sum / 300, st.mean, 1e-15)
      assert.is.near(mc.mean.i.DIODE, st.mean, 1e-15)
      assert.is.near(mc.sd.i.DIODE, st.sd, 1e-12 * mc.sd.i.DIODE)
      -- (the two forms solve by different routes: equal to rounding)
      assert.is.near(mc.min.i.DIODE, st.min, 1e-15)
      assert.is.near(mc.max.i.DIODE, st.max, 1e-15)
      -- values restored afterwards
      assert.is.near((5 - 0.6) / 1010, net:solve().i.DIODE, 1e-15)
    end)

    it("into arrays: warnings count runs, bad quantities are named", function()
      -- about 11 mA at 0.6 V: near 7 mW against a 1 mW rating in every run
      local net = one_device(12, 1000, nil, { pmax = 1e-3 })
      local a = net:montecarlo({ R = 0.05 }, { runs = 50, out = { "i.DIODE" } })
      assert.are.equal(50, #a["i.DIODE"])
      assert.are.equal(1, #a.warnings)
      assert.are.equal("pmax", a.warnings[1].kind)
      assert.are.equal(50, a.warnings[1].count)
      assert.matches("in 50 of 50 runs", tostring(a.warnings[1]))
      local ok, msg = pcall(net.montecarlo, net, { R = 0.05 }, { runs = 5, out = { "i.NOPE" } })
      assert.is_false(ok)
      assert.matches("NOPE", msg)
      ok, msg = pcall(net.montecarlo, net, { R = 0.05 }, { runs = 5, out = {} })
      assert.is_false(ok)
      assert.matches("at least one quantity", msg)
    end)
  end)

  describe("exact comparison", function()
    it("Newton from the PWL point, and compare_ops / op:diff", function()
      local c = sw.curve.diode { is = 1e-12, n = 1, vt = 0.025, x = "v" }
      local xs, ys = {}, {}
      for k = 0, 8 do xs[#xs + 1] = 0.1 * k; ys[#ys + 1] = c(0.1 * k) end
      local net = one_device(5, 1000, sw.pwl { x = xs, y = ys }, { exact = c })
      local pw = net:solve()
      local ex = net:solve { exact = true }
      assert.are.equal("exact", ex.method)
      assert.is_true(ex.iterations >= 1)
      H.check_kirchhoff(net, pw)
      local d = sw.compare_ops(pw, ex)
      assert.is_true(d.DIODE.rel_i < 0.02)
      assert.are.same(d, pw:diff(ex))
      assert.is.near(math.abs(pw.i.DIODE - ex.i.DIODE), d.DIODE.di, 1e-18)
    end)
    it("reports when the exact circuit has no solution near the PWL point", function()
      -- exact law i = 0.01 + v^2 against the load line i = -v/100: v^2 + v/100
      -- + 0.01 = 0 has discriminant 1e-4 - 0.04 < 0, so no real root
      local f = sw.curve.fn(function(v) return 0.01 + v * v end, { lo = -100, hi = 100 })
      local net = one_device(0, 100, sw.pwl { x = { -1, 0, 1 }, y = { -0.01, 0, 0.01 } },
        { exact = f })
      local ok, err = pcall(net.solve, net, { exact = true })
      assert.is_false(ok)
      assert.truthy(err:find("exact: Newton's method"))
      assert.is.near(0, net:solve().vd.DIODE, 1e-15) -- the PWL circuit itself is fine
    end)
    it("uses Lua function curves and reports their errors", function()
      local f = sw.curve.fn(function(v) return 0.1 * (v - 0.6) + 0.001 * v * v end,
        { lo = -10, hi = 10 })
      local net = one_device(5, 1000, knee(), { exact = f })
      local ex = net:solve { exact = true }
      -- 5 = 1000 i + v with i = 0.1 (v - 0.6) + 0.001 v^2: check the residual
      local v = ex.vd.DIODE
      assert.is.near(5, 1000 * (0.1 * (v - 0.6) + 0.001 * v * v) + v, 1e-10)
      local bad = sw.curve.fn(function() error("boom") end, { lo = -10, hi = 10 })
      local net2 = one_device(5, 1000, knee(), { exact = bad })
      local ok, err = pcall(net2.solve, net2, { exact = true })
      assert.is_false(ok)
      assert.truthy(tostring(err):find("boom"))
    end)
  end)
end)
