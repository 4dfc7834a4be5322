-- Inputs that used to be ignored or garbled without a word now get a clear
-- error naming the option.
local sw = require "segwise"

local errmsg = require("helpers.files").errmsg

describe("segwise: nothing silently ignored", function()
  local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }

  it("through as a keyed table is refused, not ignored", function()
    assert.matches("segwise.fit: through must be a list of {x, y} pairs %(it has the key [xy]%)",
      errmsg(sw.fit, law, { lo = 0.2, hi = 0.8, through = { x = 0.5, y = 0 } }))
  end)

  it("a list of pairs still works, in any order", function()
    local m = sw.fit(law,
      { lo = 0.2, hi = 0.8, through = { { 0.7, law(0.7) }, { 0.5, law(0.5) } } })
    assert.is.near(law(0.5), m(0.5), 1e-12)  -- the model passes through both points
    assert.is.near(law(0.7), m(0.7), 1e-12)
  end)

  it("a bad knot scheme name is quoted in the message", function()
    assert.matches('or a list %(got "bogus"%)',
      errmsg(sw.fit, law, { lo = 0.2, hi = 0.8, knots = "bogus" }))
  end)

  it("one owner for the defaults: minimax and lsq default to optimal knots", function()
    assert.are.equal("optimal", sw.fit(law, { lo = 0.2, hi = 0.8 }):fit_info().knots)
    assert.are.equal("optimal",
      sw.fit(law, { lo = 0.2, hi = 0.8, criterion = "lsq" }):fit_info().knots)
    assert.are.equal("uniform",
      sw.fit(law, { lo = 0.2, hi = 0.8, criterion = "interp" }):fit_info().knots)
  end)

  it("a knot list without the range ends gets them", function()
    local m = sw.fit(law, { lo = 0.2, hi = 0.8, knots = sw.array { 0.5 } })
    local xs = m:knots()
    assert.are.same({ 0.2, 0.5, 0.8 }, xs)
  end)

  it("a current forced against a flat segment at 0 says so", function()
    -- invented model: no current below 0.6 V (flat at 0 down to -inf), then
    -- a rising segment; a source forcing -1 mA through it has no answer
    local m = sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.05 } }
    local net = sw.network()
    net:isource("ISRC", "gnd", "a", -1e-3)
    net:element("DIODE", "a", "gnd", m)
    local msg = errmsg(net.solve, net)
    assert.matches("forces i = %-0.001 A through DIODE, which its model never reaches", msg)
    assert.matches("its flat segment at 0 carries none in that direction", msg)
    -- a current the model reaches solves: 1 mA on the rising segment
    net:set("ISRC", 1e-3)
    assert.is.near(1e-3, net:solve().i.DIODE, 1e-15)
  end)
end)
