-- Calls whose Lua stack use grows with the input reserve it first: an exact
-- solve of many devices used to overflow the C stack of Lua values and
-- corrupt the heap (about 39 devices with exact curves).
local sw = require "segwise"

-- n parallel branches VS - RB_k - DIODE_k - gnd, each diode with its exact
-- Shockley curve.  Each branch solves alone, so the exact answer of every
-- branch is the same as that of one branch (checked against one branch).
local function branches(n, law, model)
  local net = sw.network()
  net:vsource("VS", "top", "gnd", 5)
  for k = 1, n do
    local mid = "m" .. k
    net:resistor("RB" .. k, "top", mid, 1000)
    net:element("DIODE" .. k, mid, "gnd", model, { x = "v", exact = law })
  end
  return net
end

describe("segwise: Lua stack use that grows with the input", function()
  local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
  local model = sw.fit(law, { lo = 0, hi = 0.8, segments = 6 })

  it("an exact solve of 200 devices with exact curves", function()
    local one = branches(1, law, model):solve { exact = true }
    local op = branches(200, law, model):solve { exact = true }
    -- identical branches: every diode current equals the single-branch one
    -- to rounding (1e-9 relative)
    for k = 1, 200 do
      assert.is.near(one.i.DIODE1, op.i["DIODE" .. k], 1e-9 * one.i.DIODE1)
    end
  end)

  it("leaves the curves usable (not marked busy) after an exact solve", function()
    branches(60, law, model):solve { exact = true }
    local c = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
    local net = branches(3, c, model)
    net:solve { exact = true }
    assert.has_no.errors(function() c:free() end)
  end)
end)
