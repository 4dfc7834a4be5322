-- Cautions an engineer needs at an operating point: a passive device whose
-- model delivers power, an answer within the model's own error, and
-- resistors and sources above their ratings.
local sw = require "segwise"

local function has(op, kind)
  for k, w in ipairs(op.warnings) do
    if op.warning_info[k].kind == kind then return w end
  end
end

describe("segwise.network cautions", function()
  -- an invented model, for the checks only: a line 0.05 A below zero at
  -- 0 V, as a minimax line through a diode's knee can be
  local leaky = sw.pwl { x = { 0, 1 }, y = { -0.05, 0.95 } }

  it("a passive device absorbing negative power is flagged", function()
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 0.02)
    net:resistor("RSER", "a", "b", 1)
    net:element("DIODE", "b", "gnd", leaky)
    local op = net:solve()
    -- v*i < 0 at the answer: i = -0.05 + v, v below 0.05 V
    assert.is_true(op.p.DIODE < 0)
    assert.matches("DIODE absorbs negative power", has(op, "passivity"))
  end)

  it("active = true marks a device that may deliver power", function()
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 0.02)
    net:resistor("RSER", "a", "b", 1)
    net:element("CELL", "b", "gnd", leaky, { active = true })
    assert.is_nil(has(net:solve(), "passivity"))
  end)

  it("a current within ten times the model's stated error is flagged", function()
    local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
    local m = sw.fit(law, { lo = 0, hi = 0.75, segments = 3 })
    local err = m:fit_info().max_abs
    local function at(volts)
      local net = sw.network()
      net:vsource("VIN", "a", "gnd", volts)
      net:resistor("RSER", "a", "b", 100)
      net:element("DIODE", "b", "gnd", m)
      return net:solve()
    end
    local low = at(0.3)       -- far below the knee: i is tiny next to err
    assert.is_true(math.abs(low.i.DIODE) < 10 * err)
    assert.matches("within the model's noise", has(low, "noise"))
    local high = at(5)        -- tens of mA, well above the error
    assert.is_true(math.abs(high.i.DIODE) >= 10 * err)
    assert.is_nil(has(high, "noise"))
  end)

  it("resistors and sources carry ratings", function()
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 10, { imax = 0.05 })
    net:resistor("RLOAD", "a", "gnd", 100, { pmax = 0.25 }) -- 1 W in a 0.25 W part
    local op = net:solve()
    assert.matches("RLOAD dissipates 1 W, above its pmax rating of 0.25 W", has(op, "pmax"))
    assert.matches("VIN carries 0.1 A, above its current limit imax of 0.05 A", has(op, "imax"))
    local ok = sw.network()
    ok:vsource("VIN", "a", "gnd", 1, { imax = 0.05 })
    ok:resistor("RLOAD", "a", "gnd", 100, { pmax = 0.25 })
    local fine = ok:solve()
    assert.is_nil(has(fine, "pmax"))
    assert.is_nil(has(fine, "imax"))
  end)

  it("refuses a bad rating, naming it", function()
    local net = sw.network()
    assert.has_error(function() net:resistor("RLOAD", "a", "gnd", 100, { pmax = -1 }) end,
      "segwise.network:resistor: pmax (-1) must be positive")
    assert.has_error(function() net:resistor("RLOAD", "a", "gnd", 100, { imax = 1 }) end)
  end)
end)

describe("segwise.network noise caution with a relative-error fit", function()
  it("a 3 % relative fit is not within its noise at small currents", function()
    local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
    local m = sw.fit(law, { lo = 0.3, hi = 0.75, tol = 0.03, error = "rel" })
    local net = sw.network()
    net:vsource("VIN", "a", "gnd", 0.35)
    net:resistor("RSER", "a", "b", 100)
    net:element("DIODE", "b", "gnd", m)
    local op = net:solve()
    -- the stated error scales with |i|: 3 % of i is never a tenth of i
    for k = 1, #op.warnings do assert.are_not.equal("noise", op.warning_info[k].kind) end
  end)
end)
