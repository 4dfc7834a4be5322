-- Inputs that are almost certainly mistakes are refused with a message that
-- says why; a legitimate circuit that only looks odd is accepted.
local sw = require "segwise"
local raises = require("helpers.files").raises

-- Diode-like samples, i(v) in A (invented for the test).
local function samples()
  return sw.curve.samples({ 0.5, 0.6, 0.7, 0.8, 0.9 }, { 1e-5, 1e-4, 1e-3, 1e-2, 0.1 })
end

describe("inputs that are almost certainly mistakes", function()
  describe("relative tolerances of 100 % or more", function()
    it("are refused, naming tol and the percentage", function()
      local err = raises("segwise.fit: tol", sw.fit, samples(), { tol = 1.5, error = "rel" })
      assert.is_truthy(err:find("150 %", 1, true), err)
      assert.is_truthy(err:find("fraction", 1, true), err)
      raises("segwise.fit: tol", sw.fit, samples(), { tol = 1, error = "rel" })
      raises("segwise.fit: tol", sw.fit, samples(), { tol = 50, error = "rel" })
      -- just below 100 % and any absolute tol stay allowed
      local m = sw.fit(samples(), { tol = 0.99, error = "rel" })
      assert.is_true(m:fit_info().max_rel <= 0.99)
      local a = sw.fit(samples(), { tol = 1.5 }) -- 1.5 A: absolute, not a fraction
      assert.are.equal(1, a:nseg())
    end)

    it("are refused by the C core too (the Lua layer does not decide)", function()
      local ok, err = pcall(sw.core.fit, samples(), {
        lo = 0.5, hi = 0.9, tol = 2, error = "rel", criterion = "minimax", knots = "optimal" })
      assert.is_false(ok)
      assert.is_truthy(tostring(err):find("tol", 1, true), tostring(err))
    end)
  end)

  describe("a node held by a voltage source and read by a control input", function()
    -- VREF holds node ref at 0.5 V; only the amplifier's control input reads it
    local function reference_amplifier()
      local net = sw.network()
      net:vsource("VREF", "ref", "0", 0.5)
      net:vcvs("GAIN", "out", "0", "ref", "0", 4)
      net:resistor("RLOAD", "out", "0", 100)
      return net
    end

    it("is not dangling: the circuit solves by hand algebra", function()
      local op = reference_amplifier():solve()
      assert.is.near(0.5, op.v.ref, 1e-14) -- held by VREF
      assert.is.near(2.0, op.v.out, 1e-14) -- 4 * 0.5
      assert.is.near(0, op.i.VREF, 1e-14) -- a control input draws no current
      assert.is.near(0.02, op.i.RLOAD, 1e-14) -- 2 V / 100 ohm
    end)

    it("with a PWL device on the output, every method agrees", function()
      local net = sw.network()
      net:vsource("VREF", "ref", "0", 0.5)
      net:vccs("DRIVE", "0", "out", "ref", "0", 0.01) -- 5 mA into out
      net:resistor("RLOAD", "out", "0", 1000)
      net:element("CLAMP", "out", "0", sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 0, 0.02 } })
      for _, method in ipairs { "assumed", "enumerate", "lcp" } do
        local op = net:solve { method = method }
        -- 5 mA = v/1000 + (v - 0.6)/10 on the clamp's second segment (hand algebra)
        assert.is.near((0.005 + 0.06) / (0.001 + 0.1), op.v.out, 1e-12)
      end
    end)

    it("a node reached only by a resistor is still dangling", function()
      local net = reference_amplifier()
      net:resistor("RSTUB", "out", "tip", 10)
      raises("node 'tip' is dangling: only RSTUB connects to it", net.solve, net)
    end)

    it("a voltage source to a node nothing reads is still dangling", function()
      local net = reference_amplifier()
      net:vsource("VSPARE", "spare", "0", 1)
      raises("node 'spare' is dangling: only VSPARE connects to it", net.solve, net)
    end)
  end)

  describe("temperatures outside 150-1000 K", function()
    it("are refused by curve.diode with a hint that the law takes kelvin", function()
      local err = raises("segwise.curve.diode: temp", sw.curve.diode, { is = 1e-14, temp = 25 })
      assert.is_truthy(err:find("kelvin", 1, true), err)
      assert.is_truthy(err:find("298.15", 1, true), err) -- 25 degrees C in kelvin
      raises("segwise.curve.diode: temp", sw.curve.diode, { is = 1e-14, temp = 1200 })
      raises("segwise.curve.diode: temp", sw.curve.diode, { is = 1e-14, temp = 149.9 })
    end)

    it("are refused by thermal_voltage", function()
      local err = raises("segwise.thermal_voltage: kelvin", sw.thermal_voltage, 27)
      assert.is_truthy(err:find("300.15", 1, true), err)
      raises("segwise.thermal_voltage: kelvin", sw.thermal_voltage, 1001)
      -- the ends of the range are accepted;
      -- kT/q with k = 1.380649e-23 J/K, q = 1.602176634e-19 C (SI 2019 exact values)
      assert.is.near(150 * 1.380649e-23 / 1.602176634e-19, sw.thermal_voltage(150), 1e-15)
      assert.is.near(1000 * 1.380649e-23 / 1.602176634e-19, sw.thermal_voltage(1000), 1e-15)
      local hot = sw.curve.diode { is = 1e-14, temp = 1000 }
      assert.is.near(sw.thermal_voltage(1000), hot:params().vt, 0)
    end)
  end)
end)
