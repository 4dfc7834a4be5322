-- Exact solves (net:solve{exact = true}) converge whatever the orientation
-- of the device's model: a diode given as v(i) in reverse bias and cut-off,
-- stacked junctions, and poor PWL starts.  References: the Lambert W
-- solution of the diode-resistor circuit, i = (n Vt / R) W(Is R / (n Vt)
-- e^((E + Is R) / (n Vt))) - Is (a standard result), with W computed here by
-- Halley's iteration; m identical diodes in series carry one current and
-- share the voltage equally, so they act as one diode of ideality m n
-- (common practice).
local sw = require "segwise"

local IS, N, VT = 1e-14, 1, 0.025852 -- VT: kT/q at 300 K, given explicitly

-- W(e^L) for real L, by Halley's iteration: on w e^w = z for small z, on
-- w + ln w = L where e^L would overflow.
local function lambert_w_exp(L)
  local w
  if L < 1 then
    local z = math.exp(L)
    w = z < 0.5 and z or 0.5
    for _ = 1, 100 do
      local ew = math.exp(w)
      local f = w * ew - z
      local step = f / (ew * (w + 1) - (w + 2) * f / (2 * w + 2))
      w = w - step
      if math.abs(step) <= 1e-16 * math.abs(w) then break end
    end
  else
    w = L - math.log(L)
    for _ = 1, 100 do
      local g, g1, g2 = w + math.log(w) - L, 1 + 1 / w, -1 / (w * w)
      local step = 2 * g * g1 / (2 * g1 * g1 - g * g2)
      w = w - step
      if math.abs(step) <= 1e-16 * w then break end
    end
  end
  return w
end

-- Current of m identical diodes (ideality n each) in series with R from E.
local function closed_form(E, R, m)
  local nvt = m * N * VT
  local L = math.log(IS * R / nvt) + (E + IS * R) / nvt
  return nvt / R * lambert_w_exp(L) - IS
end

local function law(x) return sw.curve.diode { is = IS, n = N, vt = VT, x = x } end

-- A fitted model in either orientation: v(i) over [0, imax], i(v) over [0, vmax].
local function model(x, segments, hi)
  local range = x == "i" and 0.01 or 0.75
  return sw.fit(law(x), { lo = 0, hi = hi or range, segments = segments or 6 })
end

-- VS -> RS -> m diodes in series to ground; the devices are D1..Dm.
local function string_net(m, E, R, x, segments, hi)
  local net = sw.network()
  net:vsource("VS", "n0", "0", E)
  net:resistor("RS", "n0", "n1", R)
  for k = 1, m do
    net:element("D" .. k, "n" .. k, k == m and "0" or "n" .. (k + 1), model(x, segments, hi),
      { x = x, exact = law(x) })
  end
  return net
end

local METHODS = { newton = true, limited = true, continuation = true }

local function check_report(op)
  assert.is_true(METHODS[op.exact_method] ~= nil, tostring(op.exact_method))
  assert.are.equal(math.type(op.iterations), "integer")
  assert.is_true(op.iterations >= 0)
end

describe("segwise.network exact solve is robust", function()
  describe("a diode given as v(i)", function()
    local R = 1000

    local function solve_both(E, segments)
      local ex_i = string_net(1, E, R, "i", segments):solve { exact = true }
      local ex_v = string_net(1, E, R, "v", segments):solve { exact = true }
      return ex_i, ex_v
    end

    it("solves in reverse bias, just above -Is, agreeing with i(v) and the closed form", function()
      for _, E in ipairs { -5, -1, -0.05 } do
        local ex_i, ex_v = solve_both(E)
        local iref = closed_form(E, R, 1)
        check_report(ex_i)
        -- never below -Is (at E = -1 V the answer, -Is (1 - 1.6e-17), rounds to -Is)
        assert.is_true(ex_i.i.D1 >= -IS, ("E = %g: i = %.17g"):format(E, ex_i.i.D1))
        assert.is.near(ex_v.i.D1, ex_i.i.D1, 1e-9 * math.abs(ex_v.i.D1))
        assert.is.near(iref, ex_i.i.D1, 1e-9 * math.abs(iref))
        -- Kirchhoff around the loop: E = R i + v
        assert.is.near(E, R * ex_i.i.D1 + ex_i.vd.D1, 1e-12 * math.abs(E))
      end
    end)

    it("solves in cut-off (source below the knee) with a 6- and a 2-segment model", function()
      for _, segments in ipairs { 6, 2 } do
        for _, E in ipairs { 0.1, 0.2, 0.3 } do
          local ex_i, ex_v = solve_both(E, segments)
          local iref = closed_form(E, R, 1)
          check_report(ex_i)
          assert.is.near(ex_v.i.D1, ex_i.i.D1, 1e-9 * ex_v.i.D1)
          assert.is.near(iref, ex_i.i.D1, 1e-9 * iref)
        end
      end
      -- and at zero drive, zero current (tolerance: 1e-9 of Is, the law's scale)
      assert.is.near(0, string_net(1, 0, R, "i"):solve { exact = true }.i.D1, 1e-9 * IS)
    end)
  end)

  describe("stacked junctions", function()
    it("3 to 5 diodes in series, forward: one current, an equal share of the voltage", function()
      for _, x in ipairs { "i", "v" } do
        for m = 3, 5 do
          local E, R = 5, 1000
          local ex = string_net(m, E, R, x):solve { exact = true }
          local iref = closed_form(E, R, m)
          check_report(ex)
          assert.is.near(iref, ex.i.D1, 1e-9 * iref)
          for k = 1, m do
            assert.is.near((E - R * iref) / m, ex.vd["D" .. k], 1e-9 * E)
          end
        end
      end
    end)

    it("3 to 5 diodes in series, reverse: the current is -Is and the voltages add up", function()
      for _, x in ipairs { "i", "v" } do
        for m = 3, 5 do
          local E, R = -5, 1000
          local ex = string_net(m, E, R, x):solve { exact = true }
          local iref = closed_form(E, R, m)
          local sum = 0
          check_report(ex)
          assert.is.near(iref, ex.i.D1, 1e-9 * math.abs(iref))
          for k = 1, m do
            assert.is_true(ex.vd["D" .. k] < 0)
            sum = sum + ex.vd["D" .. k]
          end
          assert.is.near(E - R * ex.i.D1, sum, 1e-12 * math.abs(E))
        end
      end
    end)

    it("4 diodes in cut-off (source below four knees)", function()
      for _, x in ipairs { "i", "v" } do
        local E, R = 0.5, 1000
        local ex = string_net(4, E, R, x):solve { exact = true }
        local iref = closed_form(E, R, 4)
        check_report(ex)
        assert.is.near(iref, ex.i.D1, 1e-9 * iref)
      end
    end)
  end)

  describe("poor PWL starts (2-segment models)", function()
    it("a diode string whose 2-segment i(v) model puts the start far from the answer", function()
      for _, case in ipairs { { 5, 10, 10 }, { 3, 5, 100 } } do
        local m, E, R = case[1], case[2], case[3]
        local net = string_net(m, E, R, "v", 2, 0.9)
        local pw, ex = net:solve(), net:solve { exact = true }
        local iref = closed_form(E, R, m)
        check_report(ex)
        assert.is_true(math.abs(pw.i.D1 - iref) > 0.01 * iref) -- the start is poor
        assert.is.near(iref, ex.i.D1, 1e-9 * iref)
      end
    end)

    -- VS (with RSRC) across a bridge: BR_A, BR_D conduct for E > 0, BR_B,
    -- BR_C are reverse biased by about the load voltage.
    local function bridge(E, RL, x)
      local net = sw.network()
      net:vsource("VS", "p", "0", E)
      net:resistor("RSRC", "p", "q", 1)
      local arms = { { "BR_A", "q", "top" }, { "BR_B", "0", "top" }, { "BR_C", "bot", "q" },
                     { "BR_D", "bot", "0" } }
      for _, d in ipairs(arms) do
        net:element(d[1], d[2], d[3], model(x, 2, 0.01), { x = x, exact = law(x) })
      end
      net:resistor("RLOAD", "top", "bot", RL)
      return net
    end

    it("a bridge rectifier with 2-segment v(i) models: two junctions on, two reverse", function()
      for _, case in ipairs { { 10, 100 }, { 2, 10 } } do
        local E, RL = case[1], case[2]
        local ex = bridge(E, RL, "i"):solve { exact = true }
        -- the conducting path is two diodes in series with RSRC + RLOAD; the
        -- reverse leakage (Is) is 1e-11 of the current, below the tolerance
        local iref = closed_form(E, 1 + RL, 2)
        check_report(ex)
        assert.is.near(iref, ex.i.BR_A, 1e-9 * iref)
        assert.is.near(iref, ex.i.BR_D, 1e-9 * iref)
        for _, name in ipairs { "BR_B", "BR_C" } do
          assert.is_true(ex.vd[name] < 0)
          -- reverse current: the i(v) law at the reported voltage
          local ilaw = IS * (math.exp(ex.vd[name] / (N * VT)) - 1)
          assert.is.near(ilaw, ex.i[name], 1e-9 * IS)
        end
      end
    end)
  end)

  describe("says how it got there", function()
    it("a good start takes plain Newton steps", function()
      local ex = string_net(1, 5, 1000, "v", 8):solve { exact = true }
      assert.are.equal("newton", ex.exact_method)
      assert.is_true(ex.iterations >= 1 and ex.iterations <= 10)
      assert.are.equal(0, ex.exact_steps)
    end)

    it("a poor start takes limited steps or the continuation, and says so", function()
      local ex = string_net(5, 3, 10, "v", 2, 0.9):solve { exact = true }
      local m = ex.exact_method
      assert.is_true(m == "limited" or m == "continuation", m)
      assert.is_true(ex.iterations >= 1)
    end)

    it("a Lua-function law that plain steps cannot reach is solved by continuation", function()
      -- the same Shockley law as a Lua function: no junction limit applies
      local f = sw.curve.fn(function(v) return IS * (math.exp(v / (N * VT)) - 1) end,
        { lo = -30, hi = 1.5 })
      local net = sw.network()
      net:vsource("VS", "n0", "0", -10)
      net:resistor("RS", "n0", "n1", 10)
      for k = 1, 3 do
        net:element("D" .. k, "n" .. k, k == 3 and "0" or "n" .. (k + 1),
          sw.fit(law("v"), { lo = 0, hi = 0.6, segments = 2 }), { exact = f })
      end
      local ex = net:solve { exact = true }
      assert.are.equal("continuation", ex.exact_method)
      assert.is_true(ex.exact_steps >= 1)
      assert.is.near(closed_form(-10, 10, 3), ex.i.D1, 1e-9 * IS)
    end)

    it("still says when the exact circuit has no solution near the PWL point", function()
      -- i = 0.01 + v^2 against the load line i = -v/100: no real root
      local f = sw.curve.fn(function(v) return 0.01 + v * v end, { lo = -100, hi = 100 })
      local net = sw.network()
      net:vsource("VS", "a", "0", 0)
      net:resistor("RS", "a", "b", 100)
      local m = sw.pwl { x = { -1, 0, 1 }, y = { -0.01, 0, 0.01 } }
      net:element("D1", "b", "0", m, { exact = f })
      local ok, err = pcall(net.solve, net, { exact = true })
      assert.is_false(ok)
      assert.matches("by continuation", err)
    end)
  end)
end)
