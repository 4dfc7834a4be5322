-- Warnings an operating point carries: a device outside its model's knots.
local sw = require "segwise"

describe("segwise.network warnings", function()
  local function circuit(r)
    local m = sw.pwl { x = { 0.6, 0.7, 0.8 }, y = { 0, 0.01, 0.05 } }
    local net = sw.network()
    net:vsource("VS", "in", "0", 5)
    net:resistor("RSER", "in", "a", r)
    net:element("DIODE", "a", "0", m)
    return net
  end

  it("warns when a device runs on an extrapolated segment", function()
    -- Ohm's law by hand: on the last segment (slope 0.4 S from 0.7 V) with
    -- 10 ohm, i = (5 - v)/10 = 0.01 + 0.4 (v - 0.7) gives v = 1.54 V > 0.8 V.
    local op = circuit(10):solve()
    assert.is.near(1.54, op.vd.DIODE, 1e-12)
    local found = false
    for _, w in ipairs(op.warnings) do
      if w:match("DIODE operates at v = 1.54, outside its model's knots") then found = true end
    end
    assert.is_true(found)
  end)

  it("stays quiet inside the knots, also along a sweep", function()
    local net = circuit(470)
    assert.are.equal(0, #net:solve().warnings)
    local rows = net:sweep("VS", { 4, 5, 6 })
    for _, row in ipairs(rows) do assert.are.equal(0, #row.warnings) end
  end)
end)

describe("segwise.network exact solve at a sampled curve's edge", function()
  it("names the device and its domain instead of returning a huge number", function()
    -- A measured curve known only on [0, 1] V; 2 V reversed across it drives
    -- the exact circuit (Kirchhoff: v = -2 - 10 i) outside what was measured.
    local c = sw.curve.samples({ 0, 0.5, 0.7, 1 }, { 0, 1e-4, 0.01, 0.2 })
    local m = sw.pwl { x = { 0, 0.5, 0.7, 1 }, y = { 0, 1e-4, 0.01, 0.2 } }
    local net = sw.network()
    net:vsource("VS", "a", "0", -2)
    net:element("DIODE", "a", "b", m, { exact = c })
    net:resistor("RL", "b", "0", 10)
    local ok, msg = pcall(net.solve, net, { exact = true })
    assert.is_false(ok)
    assert.matches("outside the domain of DIODE's exact law %[0, 1%]", msg)
    -- and the network stays usable: forward drive solves exactly
    net:set("VS", 0.8)
    local ex = net:solve { exact = true }
    -- Kirchhoff on the loop: 0.8 = v + 10 i
    assert.is.near(0.8, ex.vd.DIODE + 10 * ex.i.DIODE, 1e-12)
  end)
end)

describe("segwise.network operating points in a REPL", function()
  it("print as the operating-point table", function()
    local net = sw.network()
    net:vsource("VS", "in", "0", 5)
    net:resistor("RSER", "in", "a", 470)
    net:element("DIODE", "a", "0", sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 0, 0.05 } })
    local s = tostring(net:solve())
    assert.matches("node voltages", s)
    assert.matches("DIODE", s)
    assert.matches("RSER", s)
  end)
end)
