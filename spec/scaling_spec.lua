-- Circuits whose element values span many decades: the MNA matrix is
-- equilibrated before it is factorised, singularity is decided on the
-- scaled matrix, and every answer keeps Kirchhoff's current law.  The
-- references are Ohm's law and the series/parallel rules (common practice).
local sw = require "segwise"
local H = require "spec.helpers.net"
H.assert = assert

local function divider(r_top, r_bottom, volts)
  local net = sw.network()
  net:vsource("VIN", "top", "gnd", volts or 1)
  net:resistor("RTOP", "top", "mid", r_top)
  net:resistor("RBOTTOM", "mid", "gnd", r_bottom)
  return net
end

-- |a - b| within rel of |a|
local function rel_near(a, b, rel)
  assert.is_true(math.abs(a - b) <= rel * math.abs(a),
    ("expected %.17g, got %.17g (relative %.3g)"):format(a, b, math.abs(a - b) / math.abs(a)))
end

describe("segwise: element values over many decades", function()
  for _, r in ipairs { 1e13, 1e15, 1e18 } do
    it(("an insulation path: 1 V across two %g ohm resistors"):format(r), function()
      local op = divider(r, r):solve()
      rel_near(0.5, op.v.mid, 1e-12)           -- equal halves
      rel_near(1 / (2 * r), op.i.RTOP, 1e-12)  -- Ohm's law
      rel_near(-1 / (2 * r), op.i.VIN, 1e-12)  -- the source delivers it
      H.check_kirchhoff(divider(r, r), op, 1e-12)
    end)
  end

  for _, r in ipairs { 1e-7, 1e-10 } do
    it(("a %g ohm shunt below 1 ohm"):format(r), function()
      local net = divider(1, r)
      local op = net:solve()
      rel_near(r / (1 + r), op.v.mid, 1e-12)
      rel_near(1 / (1 + r), op.i.RTOP, 1e-12)
      rel_near(1 / (1 + r), op.i.RBOTTOM, 1e-12)
      rel_near(-1 / (1 + r), op.i.VIN, 1e-12)
      H.check_kirchhoff(net, op, 1e-12)
    end)
  end

  it("one series loop of 1e-9, 1e9 and 1e-9 ohm carries one current", function()
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 1)
    net:resistor("RLOW1", "a", "b", 1e-9)
    net:resistor("RHIGH", "b", "c", 1e9)
    net:resistor("RLOW2", "c", "gnd", 1e-9)
    local op = net:solve()
    local i = 1 / (1e9 + 2e-9)
    for _, name in ipairs { "RLOW1", "RHIGH", "RLOW2" } do rel_near(i, op.i[name], 1e-12) end
    rel_near(-i, op.i.VIN, 1e-12)
    H.check_kirchhoff(net, op, 1e-12)
  end)

  it("a current source into 1 micro-ohm beside 1 tera-ohm", function()
    local net = sw.network()
    net:isource("ISRC", "gnd", "n", 1e-3)
    net:resistor("RLOW", "n", "gnd", 1e-6)
    net:resistor("RHIGH", "n", "gnd", 1e12)
    local op = net:solve()
    local v = 1e-3 / (1 / 1e-6 + 1 / 1e12)  -- parallel conductances
    rel_near(v, op.v.n, 1e-12)
    rel_near(v / 1e12, op.i.RHIGH, 1e-12)
    H.check_kirchhoff(net, op, 1e-12)
  end)

  it("a diode with a 10 tera-ohm leakage path solves, and so does a sweep", function()
    local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
    local model = sw.fit(law, { lo = 0, hi = 0.8, segments = 6 })
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 5)
    net:resistor("RSER", "a", "k", 1e3)
    net:element("DIODE", "k", "gnd", model, { x = "v" })
    net:resistor("RLEAK", "k", "gnd", 1e13)
    net:resistor("RGUARD1", "a", "g", 1e13)
    net:resistor("RGUARD2", "g", "gnd", 1e13)
    local op = net:solve()
    rel_near(2.5, op.v.g, 1e-12)
    rel_near(op.v.k / 1e13, op.i.RLEAK, 1e-12)
    H.check_kirchhoff(net, op, 1e-12)
    local rows = net:sweep("VIN", { 1, 2, 3 })
    for k, row in ipairs(rows) do rel_near(k / 2, row.v.g, 1e-12) end
  end)

  it("sweeps a resistor across the ratio where another gets its own current unknown", function()
    -- RTOP = 1 ohm becomes a resistor solved for its current once RBOTTOM
    -- passes 1e8 ohm: the sweep's workspace must hold the larger system
    -- (a heap overflow found by the network fuzzer)
    local values = { 1e3, 1e9, 1e12, 10 }
    local net = divider(1, 1e3)
    local rows = net:sweep("RBOTTOM", values)
    local arr = net:sweep("RBOTTOM", values, { out = { "i.RTOP", "v.mid" } })
    for k, r in ipairs(values) do
      rel_near(1 / (1 + r), rows[k].i.RTOP, 1e-12)  -- Ohm's law, series pair
      rel_near(1 / (1 + r), arr["i.RTOP"][k], 1e-12)
      rel_near(r / (1 + r), arr["v.mid"][k], 1e-12)
    end
  end)

  it("keeps Kirchhoff's current law on ladders with values from 1 micro-ohm to 1 tera-ohm",
    function()
      -- a pseudo-random ladder (fixed seed): series values and shunts
      -- log-uniform over 18 decades
      local seed = 12345
      local function rnd()
        seed = (seed * 1103515245 + 12345) % 2147483648
        return seed / 2147483648
      end
      for trial = 1, 20 do
        local net = sw.network()
        net:vsource("VIN", "n0", "gnd", 10)
        for k = 1, 8 do
          net:resistor("RSER" .. k, "n" .. (k - 1), "n" .. k, 10 ^ (-6 + 18 * rnd()))
          net:resistor("RSH" .. k, "n" .. k, "gnd", 10 ^ (-6 + 18 * rnd()))
        end
        local ok, op = pcall(net.solve, net)
        assert(ok, ("trial %d: %s"):format(trial, tostring(op)))
        H.check_kirchhoff(net, op, 1e-10)
      end
    end)
end)
