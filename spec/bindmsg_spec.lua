-- Messages of the binding: every bad argument is named with the function it
-- was given to, integers are checked for range before any conversion, and
-- names stay whole (no NUL bytes, one node for 1 and 1.0).
local sw = require "segwise"
local files = require "helpers.files"
local raises, errmsg = files.raises, files.errmsg
local H = require "helpers.net"
H.assert = assert

local function model() return sw.pwl { x = { 0, 1, 2, 3 }, y = { 0, 1, 3, 6 } } end

local function divider()
  local net = sw.network()
  net:vsource("VIN", "top", "0", 5)
  net:resistor("RA", "top", "mid", 100)
  net:resistor("RB", "mid", "0", 100)
  return net
end

describe("segwise: binding messages", function()
  describe("integer arguments", function()
    it("name the index given, however large", function()
      local m = model()
      raises("segwise.model:seg: segment index 1099511627776 is outside 1..3", function()
        return m:seg(2 ^ 40)
      end)
      raises("segment index 1.1805916207174e+21 is outside 1..3",
        function() return m:seg(2 ^ 70) end)
      raises("segment index must be a whole number (got 1.5)", function() return m:seg(1.5) end)
      raises("segment index -4 is outside 1..3", function() return m:thevenin(-4) end)
      assert.are.equal(3, m:seg(3.0).hi) -- an integral float is the integer
    end)

    it("Monte Carlo runs and seeds are whole numbers in range, never silently changed", function()
      local net = divider()
      raises("segwise.network:montecarlo: runs must be a whole number in 1..100000000 "
        .. "(got 1e+300)", net.montecarlo, net, { RA = 0.1 }, { runs = 1e300 })
      raises("seed must be a whole number in 0..4294967295 (got 1.5)",
        net.montecarlo, net, { RA = 0.1 }, { runs = 2, seed = 1.5 })
      raises("seed must be a whole number in 0..4294967295", net.montecarlo, net, { RA = 0.1 },
        { runs = 2, seed = 2 ^ 32 })
      -- seed 1.0 is seed 1: the same draws
      local a = net:montecarlo({ RA = 0.1 }, { runs = 3, seed = 1 })
      local b = net:montecarlo({ RA = 0.1 }, { runs = 3, seed = 1.0 })
      for k = 1, 3 do assert.are.equal(a.runs[k].values.RA, b.runs[k].values.RA) end
    end)
  end)

  describe("names", function()
    it("1 and 1.0 are one node (and op.v[1.0] reads it)", function()
      local net = sw.network()
      net:vsource("VIN", 1, 0, 4)
      net:resistor("RA", 1.0, 2, 100)
      net:resistor("RB", 2.0, "0", 300)
      local op = net:solve()
      -- divider: 4 V * 300 / 400 (hand algebra)
      assert.is.near(3, op.v[2], 1e-14)
      assert.is.near(3, op.v[2.0], 1e-14)
      assert.is.near(4, op.v["1"], 1e-14)
      assert.are.equal(3, #net:info().nodes) -- 0, 1 and 2
      H.check_kirchhoff(net, op)
    end)

    it("a number that is not whole is refused as a name", function()
      local net = divider()
      raises("segwise.network:resistor: node 1 must be a string or a whole number (got 1.5)",
        net.resistor, net, "RC", 1.5, "0", 10)
      raises("name must be a string or a whole number (got 0.5)", net.set, net, 0.5, 1)
    end)

    it("names with a NUL byte are refused, not cut short", function()
      local net = divider()
      raises("segwise.network:resistor: node 1 name contains a NUL byte", net.resistor, net, "RC",
        "mid\0x", "0", 10)
      raises("segwise.network:resistor: name contains a NUL byte", net.resistor, net, "RA\0B",
        "mid", "0", 10)
      raises("segwise.network:element: node 2 name contains a NUL byte", net.element, net, "DX",
        "mid", "0\0", model())
      -- the binding refuses them as well when it is called directly
      raises("contains a NUL byte", net._c.add, net._c, "r", "RC", "a\0b", "0", nil, nil, nil, 1)
      raises("contains a NUL byte", net._c.set, net._c, "RA\0", 1)
      assert.are.equal(3, #net:info().elements)
    end)
  end)

  describe("no message without its function's name", function()
    local net = divider()
    local c = net._c
    local cases = {
      { "add with a bad kind", function() c:add("zz", "RX", "a", "b", nil, nil, nil, 1) end,
        "segwise.network:add: kind must be one of" },
      { "add with a bad value", function() c:add("r", "RX", "a", "b", nil, nil, nil, "x") end,
        "segwise.network:resistor: value must be a number (got string)" },
      { "solve with a bad method", function() c:solve("magic") end,
        "segwise.network:solve: method must be one of" },
      { "solve with a fractional max_iter", function() net:solve { max_iter = 1.5 } end,
        "segwise.network:solve: max_iter must be a whole number (got 1.5)" },
      { "sweep of a number", function() c:sweep(5, { 1 }) end,
        "segwise.network:sweep: name must be a string (got number)" },
      { "montecarlo runs of 1e300",
        function() c:montecarlo({ "RA" }, { 0.1 }, { false }, 1e300, 1) end,
        "segwise.network:montecarlo: runs 1e+300 is outside 1..100000000" },
      { "montecarlo names not a table", function() c:montecarlo(5, { 0.1 }, { false }, 3, 1) end,
        "segwise.network:montecarlo: names must be a table (got number)" },
      { "a diode law with a string", function() sw.core.curve_diode("x") end,
        "segwise.curve.diode: is must be a number (got string)" },
      { "fit without an options table",
        function() sw.core.fit(sw.curve.power { k = 1, n = 2 }) end,
        "segwise.fit: options must be a table (got no value)" },
    }
    for _, case in ipairs(cases) do
      it(case[1], function()
        local msg = errmsg(case[2])
        assert.truthy(msg:find(case[3], 1, true), msg)
        assert.is_nil(msg:find("bad argument #", 1, true), msg)
        assert.is_nil(msg:find("'?'", 1, true), msg)
      end)
    end
  end)
end)
