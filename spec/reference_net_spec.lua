-- Network solutions checked against results from outside the project:
-- Thevenin's theorem, uniqueness for increasing devices (Duffin 1947;
-- Katzenelson 1965), hand algebra for circuits with several operating
-- points, the odd count of operating points (degree theory), and the
-- Shockley diode with series resistance (closed form by Lambert W, here
-- computed independently by bisection on the implicit equation).
local sw = require "segwise"
local H = require "helpers.net"
H.assert = assert

-- An N-shaped (tunnel-diode-like) i(v), invented (helpers.net).
local function ndevice() return H.ndevice(sw) end

describe("segwise.network reference", function()
  describe("Thevenin's theorem", function()
    it("a device sees the same point in the full network and in its Thevenin equivalent", function()
      -- Full network: VSUP = 10 V -> RSER = 1k -> a; RSHUNT = 2k a-0; ISRC = 2 mA
      -- into a; RLINK = 500 a-b; device b-0.
      local model = sw.pwl { x = { 0, 0.6, 0.7, 1.0 }, y = { 0, 1e-4, 3e-3, 0.03 } }
      local full = sw.network()
      full:vsource("VSUP", "e", "0", 10)
      full:resistor("RSER", "e", "a", 1000)
      full:resistor("RSHUNT", "a", "0", 2000)
      full:isource("ISRC", "0", "a", 2e-3)
      full:resistor("RLINK", "a", "b", 500)
      full:element("DIODE", "b", "0", model)
      -- Thevenin (hand algebra): open-circuit Va from KCL (10 - Va)/1k + 2m = Va/2k
      -- => Va = (10/1000 + 0.002) / (1/1000 + 1/2000) = 8 V; Rth = 500 + 1k||2k.
      local vth = (10 / 1000 + 0.002) / (1 / 1000 + 1 / 2000)
      local rth = 500 + 1000 * 2000 / 3000
      local th = sw.network()
      th:vsource("VTH", "t", "0", vth)
      th:resistor("RTH", "t", "b", rth)
      th:element("DIODE", "b", "0", model)
      for _, m in ipairs { "auto", "assumed", "enumerate", "lcp" } do
        local a, b = full:solve { method = m }, th:solve { method = m }
        H.check_kirchhoff(full, a)
        H.check_kirchhoff(th, b)
        assert.is.near(b.vd.DIODE, a.vd.DIODE, 1e-12)
        assert.is.near(b.i.DIODE, a.i.DIODE, 1e-15)
      end
    end)
  end)

  describe("uniqueness for strictly increasing devices (Duffin 1947; Katzenelson 1965)", function()
    -- Seeded random resistive networks with sources and strictly increasing
    -- PWL devices: exactly one operating point, and every method finds it.
    -- convex = true sorts each device's slopes upwards (diode-like).
    local function random_net(seed, nodes, ndev, convex)
      math.randomseed(seed)
      local net = sw.network()
      local function node(k) return k == 0 and "0" or ("n" .. k) end
      net:vsource("E", "s", "0", 1 + 9 * math.random())
      net:resistor("RS", "s", node(1), 10 + 1000 * math.random())
      for k = 1, nodes do
        net:resistor("RG" .. k, node(k), "0", 10 + 5000 * math.random())
        if k > 1 then net:resistor("RC" .. k, node(k - 1), node(k), 10 + 1000 * math.random()) end
      end
      net:isource("ISRC", "0", node(nodes), 1e-3 * math.random())
      for d = 1, ndev do
        local a = math.random(1, nodes)
        local b = math.random(0, nodes)
        if b == a then b = 0 end
        local xs, ys, y = { 0 }, { 0 }, 0
        local x, slopes = 0, {}
        for k = 1, math.random(2, 4) do slopes[k] = 1e-4 + 0.05 * math.random() end -- positive
        if convex then table.sort(slopes) end
        for _, g in ipairs(slopes) do
          local dx = 0.05 + 0.5 * math.random()
          y = y + dx * g
          x = x + dx
          xs[#xs + 1], ys[#ys + 1] = x, y
        end
        net:element("DIODE" .. d, node(a), node(b), sw.pwl { x = xs, y = ys })
      end
      return net
    end

    it("all methods agree on 40 seeded random networks with one solution each", function()
      for seed = 1, 40 do
        local net = random_net(seed, 2 + seed % 5, 2 + seed % 4)
        local all = net:solve_all()
        assert.are.equal(1, #all, "seed " .. seed)
        local ref = all[1]
        H.check_kirchhoff(net, ref)
        assert.are.equal("stable", ref.stability)
        for _, m in ipairs { "assumed", "lcp", "auto", "enumerate" } do
          local op = net:solve { method = m }
          H.check_kirchhoff(net, op)
          for _, d in ipairs(op.devices) do
            assert.is.near(ref.vd[d], op.vd[d], 1e-10 * (1 + math.abs(ref.vd[d])))
            assert.is.near(ref.i[d], op.i[d], 1e-12 * (1 + math.abs(ref.i[d])))
          end
        end
      end
    end)

    it("the LCP matrix is a P-matrix when the increasing devices are convex", function()
      -- Each principal minor of M is, up to a positive factor, the
      -- determinant of the circuit with some breakpoints switched; for
      -- convex increasing devices every such switch leaves a positive slope,
      -- and a passive network with positive device slopes has a positive
      -- determinant (unique solution for every source value).
      for seed = 101, 120 do
        local net = random_net(seed, 2 + seed % 4, 2 + seed % 3, true)
        local op = net:solve { method = "lcp" }
        assert.is_true(op.pmatrix, "seed " .. seed .. ": " .. tostring(op.pmatrix_test))
        H.check_kirchhoff(net, op)
      end
    end)
  end)

  describe("several operating points (hand algebra)", function()
    -- E -> R = 50 ohm -> device.  Load line i = (E - v)/50 against
    -- segment 1: i = 0.1 v                => v = E/6
    -- segment 2: i = 0.014 - 0.04 v       => v = 0.7 - E
    -- segment 3: i = 0.09 v - 0.025       => v = (E + 1.25)/5.5
    local function tunnel(e)
      local net = sw.network()
      net:vsource("E", "in", "0", e)
      net:resistor("R", "in", "a", 50)
      net:element("DIODE", "a", "0", ndevice())
      return net
    end

    it("finds the three crossings at E = 0.5 V, the middle one unstable", function()
      local net = tunnel(0.5)
      local all = net:solve_all()
      assert.are.equal(3, #all)
      table.sort(all, function(p, q) return p.vd.DIODE < q.vd.DIODE end)
      local expect = { 0.5 / 6, 0.7 - 0.5, (0.5 + 1.25) / 5.5 }
      for k = 1, 3 do
        assert.is.near(expect[k], all[k].vd.DIODE, 1e-14)
        assert.are.equal(k, all[k].state.DIODE)
        assert.is_false(all[k].on_breakpoint.DIODE)
        H.check_kirchhoff(net, all[k])
      end
      -- small capacitance C across the device: C dv/dt = (E - v)/R - i(v) is
      -- stable where g + 1/R > 0: 0.1 + 0.02 > 0, -0.04 + 0.02 < 0, 0.09 + 0.02 > 0
      assert.are.equal("stable", all[1].stability)
      assert.are.equal("unstable", all[2].stability)
      assert.are.equal("stable", all[3].stability)
      -- solve with auto warns that several exist
      local op = net:solve()
      assert.truthy(op.warnings[1]:find("3 operating points exist"))
    end)

    it("reports a crossing on a breakpoint once, flagged (E = 0.6 V)", function()
      -- segments 1 and 2 both give v = 0.1 V = the knot; segment 3 gives 1.85/5.5
      local all = tunnel(0.6):solve_all()
      assert.are.equal(2, #all)
      table.sort(all, function(p, q) return p.vd.DIODE < q.vd.DIODE end)
      assert.is.near(0.1, all[1].vd.DIODE, 1e-14)
      assert.is_true(all[1].on_breakpoint.DIODE)
      assert.is.near(1.85 / 5.5, all[2].vd.DIODE, 1e-14)
      assert.is_false(all[2].on_breakpoint.DIODE)
    end)

    it("two independent tunnel stages from one source give 3 x 3 = 9 points", function()
      local net = sw.network()
      net:vsource("E", "in", "0", 0.5)
      net:resistor("RSER", "in", "a", 50)
      net:element("DIODE", "a", "0", ndevice())
      net:resistor("RSHUNT", "in", "b", 50)
      net:element("DIODE2", "b", "0", ndevice())
      local all = net:solve_all()
      assert.are.equal(9, #all)
      local expect = { 0.5 / 6, 0.2, 1.75 / 5.5 }
      local stable = 0
      for _, op in ipairs(all) do
        assert.is.near(expect[op.state.DIODE], op.vd.DIODE, 1e-14)
        assert.is.near(expect[op.state.DIODE2], op.vd.DIODE2, 1e-14)
        H.check_kirchhoff(net, op)
        -- stable exactly when neither stage sits on its falling segment
        local want = (op.state.DIODE ~= 2 and op.state.DIODE2 ~= 2) and "stable" or "unstable"
        assert.are.equal(want, op.stability)
        if want == "stable" then stable = stable + 1 end
      end
      assert.are.equal(4, stable)
    end)
  end)

  describe("odd number of operating points (degree theory)", function()
    -- Generic circuits whose devices are eventually passive have an odd
    -- number of operating points (Leray-Schauder degree argument; common
    -- practice in nonlinear circuit theory).
    it("holds on 30 seeded random circuits with N-shaped devices", function()
      math.randomseed(2024)
      local counts = {}
      for trial = 1, 30 do
        local net = sw.network()
        net:vsource("E", "in", "0", 0.2 + 0.6 * math.random())
        net:resistor("RSER", "in", "a", 20 + 60 * math.random())
        net:element("DIODE", "a", "0", ndevice())
        net:resistor("RSHUNT", "a", "b", 5 + 50 * math.random())
        net:element("DIODE2", "b", "0", ndevice())
        net:resistor("RLINK", "b", "0", 50 + 500 * math.random())
        local all = net:solve_all()
        counts[#all] = (counts[#all] or 0) + 1
        assert.are.equal(1, #all % 2, "trial " .. trial .. ": " .. #all .. " points")
        for _, op in ipairs(all) do H.check_kirchhoff(net, op) end
      end
    end)
  end)

  describe("exact mode against the diode with series resistance", function()
    it("Newton on the Shockley law matches the implicit equation solved by bisection", function()
      -- i = Is (exp((E - i R)/(n Vt)) - 1); closed form by Lambert W; here the
      -- independent check is bisection on that implicit equation.
      local is, n, vt, E, R = 1e-12, 1.5, 0.025852, 5, 1000
      local law = sw.curve.diode { is = is, n = n, vt = vt, x = "v" }
      local xs, ys = {}, {}
      for k = 0, 10 do
        local v = 0.09 * k
        xs[#xs + 1], ys[#ys + 1] = v, is * (math.exp(v / (n * vt)) - 1)
      end
      local net = sw.network()
      net:vsource("E", "in", "0", E)
      net:resistor("R", "in", "a", R)
      net:element("DIODE", "a", "0", sw.pwl { x = xs, y = ys }, { exact = law })
      local pw = net:solve()
      local ex = net:solve { exact = true }
      local iref = H.bisect(function(i)
        return is * (math.exp((E - i * R) / (n * vt)) - 1) - i
      end, 0, E / R)
      assert.is.near(iref, ex.i.DIODE, 1e-12 * iref)
      assert.is.near(E - iref * R, ex.vd.DIODE, 1e-11)
      -- the PWL point is close but not equal: the chord model errs by a few percent
      local d = pw:diff(ex)
      assert.is_true(d.DIODE.rel_i < 0.05 and d.DIODE.rel_i > 0)
      H.check_kirchhoff(net, pw)
    end)

    it("a device given as v(i) with its own series resistance (Newton on v = n Vt ln(1 + i/Is) "
      .. "+ Rs i)", function()
      local is, n, vt, rs, E, R = 1e-14, 1, 0.025852, 2, 3, 100
      local law = sw.curve.diode { is = is, n = n, vt = vt, rs = rs, x = "i" }
      local xs, ys = {}, {}
      for k = 0, 12 do
        local i = 0.03 * (k / 12) ^ 2
        xs[#xs + 1], ys[#ys + 1] = i, n * vt * math.log(1 + i / is) + rs * i
      end
      local net = sw.network()
      net:vsource("E", "in", "0", E)
      net:resistor("R", "in", "a", R)
      net:element("DIODE", "a", "0", sw.pwl { x = xs, y = ys }, { x = "i", exact = law })
      local ex = net:solve { exact = true }
      -- independent: bisection on E = R i + n Vt ln(1 + i/Is) + Rs i
      local iref = H.bisect(function(i)
        return R * i + n * vt * math.log(1 + i / is) + rs * i - E
      end, 0, E / R)
      assert.is.near(iref, ex.i.DIODE, 1e-12 * iref)
      H.check_kirchhoff(net, net:solve())
    end)
  end)
end)
