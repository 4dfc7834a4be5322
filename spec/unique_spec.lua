-- What a solve says about its answer: op.unique (true proven, false when
-- another point is known, nil when not determined), op.unique_reason, and
-- op.stability on every net:solve result, with a warning when the
-- returned point is unstable.
local sw = require "segwise"
local H = require "helpers.net"
H.assert = assert

-- An N-shaped (tunnel-diode-like) i(v), invented (helpers.net).
local function ndevice() return H.ndevice(sw) end

-- E -> RSER = 50 ohm -> device.  Load line (E - v)/50 against (hand algebra)
-- segment 1: v = E/6; segment 2: v = 0.7 - E; segment 3: v = (E + 1.25)/5.5.
local function tunnel(e)
  local net = sw.network()
  net:vsource("VIN", "in", "0", e)
  net:resistor("RSER", "in", "a", 50)
  net:element("TD", "a", "0", ndevice())
  return net
end

-- `count` such stages in parallel on one source, each through its own 50 ohm.
local function stages(count, e)
  local net = sw.network()
  net:vsource("VIN", "in", "0", e)
  for k = 1, count do
    net:resistor("RSER" .. k, "in", "a" .. k, 50)
    net:element("TD" .. k, "a" .. k, "0", ndevice())
  end
  return net
end

-- VIN -> RFEED -> n1 -> RLINK2 -> n2 ...; a device from every node to ground.
local function ladder(size, model, head)
  local net = sw.network()
  net:vsource("VIN", "tap0", "0", 5)
  if head then head(net) end
  for j = 1, size do
    net:resistor((j == 1 and "RFEED" or "RLINK") .. j, "tap" .. (j - 1), "tap" .. j, 1000)
    net:element("DIODE" .. j, "tap" .. j, "0", model)
  end
  return net
end

local function has_warning(op, pattern)
  for _, w in ipairs(op.warnings) do if w:find(pattern) then return true end end
  return false
end

describe("segwise.network uniqueness", function()
  describe("proofs that scale", function()
    it("proves a 200-diode ladder unique by the monotone network theorem", function()
      -- Shockley law fitted over 0..0.8 V: every segment rises (checked,
      -- since the proof rests on it); 6^200 states rule out enumeration.
      local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
      local model = sw.fit(law, { lo = 0, hi = 0.8, segments = 6 })
      for k = 1, model:nseg() do assert.is_true(model:seg(k).slope > 0) end
      local net = ladder(200, model)
      local op = net:solve()
      assert.is_true(op.unique)
      assert.truthy(op.unique_reason:find("strictly increasing", 1, true))
      assert.truthy(op.unique_reason:find("monotone network theorem", 1, true))
      assert.is_nil(op.unique_reason:find("enumeration", 1, true))
      assert.are.equal("stable", op.stability)
      -- the point solves the circuit: KCL at the head node (far down the
      -- ladder the currents fall to rounding noise, too small to check)
      assert.is.near(op.i.RFEED1, op.i.DIODE1 + op.i.RLINK2, 1e-12 * op.i.RFEED1)
    end)

    it("admits flat segments when resistors and sources pin each device's voltage", function()
      -- an ideal-diode-like model: i = 0 below 0.6 V (slope 0), then rising
      local flat = sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.02 } }
      local op = ladder(200, flat):solve()
      assert.is_true(op.unique)
      assert.truthy(op.unique_reason:find("pinned", 1, true))
      assert.are.equal("stable", op.stability)
    end)

    it("does not apply the theorem to flat devices in series, and enumerates instead", function()
      -- two flat-bottomed devices in series from a current source: nothing
      -- fixes how they share the voltage while the current sits on a flat
      -- level, so the theorem must not claim this circuit
      local flat = sw.pwl { x = { -1, 0.6, 0.8 }, y = { 0, 0, 0.02 } }
      local net = sw.network()
      net:isource("IFEED", "0", "a", 1e-3)
      net:element("DTOP", "a", "b", flat)
      net:element("DLOW", "b", "0", flat)
      local op = net:solve()
      assert.is_true(op.unique)
      assert.is_nil(op.unique_reason:find("monotone", 1, true))
      assert.truthy(op.unique_reason:find("enumeration of all 4 segment combinations", 1, true))
    end)

    it("refuses the theorem for a controlled source; a diagonally dominant LCP matrix proves "
      .. "it", function()
      -- a gain-4 buffer (a controlled source) drives a 12-device ladder:
      -- 3^12 states are too many to enumerate in the verdict, so the proof is
      -- the LCP matrix's (n = 24 > 12: the diagonal dominance test)
      local three = sw.pwl { x = { 0, 0.55, 0.65, 0.8 }, y = { 0, 1e-5, 0.002, 0.02 } }
      local net = sw.network()
      net:vsource("VIN", "in", "0", 1)
      net:resistor("RIN", "in", "a", 1000)
      net:resistor("RSHUNT", "a", "0", 1000)
      net:vcvs("BUFFER", "b", "0", "a", "0", 4)
      for j = 1, 12 do
        net:resistor("RLINK" .. j, j == 1 and "b" or ("tap" .. (j - 1)), "tap" .. j, 100)
        net:element("DIODE" .. j, "tap" .. j, "0", three)
      end
      for _, method in ipairs { "auto", "assumed", "lcp" } do
        local op = net:solve { method = method }
        assert.is_true(op.unique, method)
        assert.truthy(op.unique_reason:find("P-matrix (strictly diagonally dominant", 1, true),
          method)
        assert.are.equal("stable", op.stability)
      end
    end)

    it("counts a vccs across its own terminals as a conductance, and no other controlled "
      .. "source", function()
      local model = sw.pwl { x = { 0, 0.6, 0.8 }, y = { 0, 1e-4, 0.02 } }
      local function circuit(gm, cp, cm)
        local net = sw.network()
        net:vsource("VIN", "in", "0", 5)
        net:resistor("RSER", "in", "a", 1000)
        net:vccs("LEAK", "a", "0", cp, cm, gm) -- gm * (V(cp) - V(cm)) from a to ground
        net:element("DIODE", "a", "0", model)
        net:element("DIODE2", "a", "b", model)
        net:resistor("RLOAD", "b", "0", 500)
        return net:solve()
      end
      -- 1 mS across its own terminals, either way round
      assert.truthy(circuit(1e-3, "a", "0").unique_reason:find("monotone network theorem", 1, true))
      assert.truthy(circuit(-1e-3, "0", "a").unique_reason:find("monotone network theorem",
        1, true))
      -- a negative conductance, or a control taken elsewhere: outside the theorem
      -- (these small circuits are then settled by enumeration)
      for _, op in ipairs { circuit(-1e-3, "a", "0"), circuit(1e-3, "b", "0") } do
        assert.is_nil(op.unique_reason:find("monotone", 1, true))
        assert.truthy(op.unique_reason:find("enumeration", 1, true))
      end
    end)

    it("a linear circuit has one solution", function()
      local net = sw.network()
      net:vsource("VIN", "a", "0", 2)
      net:resistor("RLOAD", "a", "0", 100)
      local op = net:solve()
      assert.is_true(op.unique)
      assert.are.equal("stable", op.stability)
    end)
  end)

  describe("when another point is known, or nothing is proven", function()
    it("says false for the bistable stage, whatever the method", function()
      for _, method in ipairs { "auto", "assumed", "enumerate", "lcp" } do
        local op = tunnel(0.5):solve { method = method }
        assert.is_false(op.unique, method)
        assert.truthy(op.unique_reason:find("^3 operating points"), method)
      end
      local all = tunnel(0.5):solve_all()
      assert.are.equal(3, #all)
      for _, op in ipairs(all) do assert.is_false(op.unique) end
      -- a steeper load line crosses once: then solve_all's single point is unique
      local one = tunnel(0.05):solve_all()
      assert.are.equal(1, #one)
      assert.is_true(one[1].unique)
    end)

    it("says false for the example's tunnel-diode-like circuit (three crossings)", function()
      local ex = assert(loadfile("examples/bistable.lua"))("--quiet")
      local net = sw.network()
      net:vsource("VIN", "in", "0", ex.e)
      net:resistor("RSER", "in", "a", ex.r)
      net:element("TD", "a", "0", ex.model)
      local op = net:solve { method = "assumed" }
      assert.is_false(op.unique)
      assert.truthy(op.unique_reason:find(("^%d operating points"):format(#ex.points)))
    end)

    it("leaves unique nil, with the reason, when no proof applies", function()
      -- 20 N-shaped stages at VIN = 0.05 V: each load line crosses once
      -- (hand algebra above: only v = E/6 lies on its segment), so the point
      -- is in fact unique, but the devices fall, the LCP matrix is no
      -- P-matrix (the same stages cross three times at 0.5 V) and 3^20
      -- states are too many to enumerate: nothing proves it.
      local e = 0.05
      local op = stages(20, e):solve()
      for k = 1, 20 do assert.is.near(e / 6, op.vd["TD" .. k], 1e-12) end
      assert.is_nil(op.unique)
      assert.truthy(op.unique_reason:find("^not determined"))
      assert.truthy(op.unique_reason:find("TD1's model decreases on segment 2", 1, true))
      assert.truthy(op.unique_reason:find("3486784401", 1, true)) -- 3^20
    end)

    it("says the verdict of an exact solve is the PWL circuit's", function()
      local law = sw.curve.diode { is = 1e-14, n = 1, vt = 0.025852 }
      local model = sw.fit(law, { lo = 0, hi = 0.8, segments = 6 })
      local net = sw.network()
      net:vsource("VIN", "in", "0", 5)
      net:resistor("RSER", "in", "a", 1000)
      net:element("DIODE", "a", "0", model, { exact = law })
      local op = net:solve { exact = true }
      assert.is_true(op.unique)
      assert.truthy(op.unique_reason:find("PWL circuit", 1, true))
    end)
  end)
end)

describe("segwise.network stability of a solve", function()
  -- with a small capacitance across the device, C dv/dt = (E - v)/R - i(v)
  -- is stable where di/dv + 1/R > 0 (linearisation; common practice):
  -- 0.1 + 0.02 > 0, -0.04 + 0.02 < 0, 0.09 + 0.02 > 0
  local want = { "stable", "unstable", "stable" }

  it("is on every method's result", function()
    for _, method in ipairs { "auto", "assumed", "enumerate", "lcp" } do
      local op = tunnel(0.5):solve { method = method }
      assert.are.equal(want[op.state.TD], op.stability, method)
    end
  end)

  it("the assumed-state method warns when its point is unstable", function()
    for seg = 1, 3 do
      local op = tunnel(0.5):solve { method = "assumed", start = { TD = seg } }
      assert.are.equal(seg, op.state.TD)
      assert.are.equal(want[seg], op.stability)
      assert.are.equal(want[seg] == "unstable", has_warning(op, "unstable"))
    end
  end)

  it("agrees between the full test and the port form used for large circuits", function()
    -- every stage on segment 1 but stage 7 on its falling segment 2; 20
    -- stages take the full MNA test, 200 the m x m port form (> 300 unknowns)
    for _, count in ipairs { 20, 200 } do
      local net = stages(count, 0.5)
      local start = {}
      for k = 1, count do start["TD" .. k] = 1 end
      start.TD7 = 2
      local op = net:solve { method = "assumed", start = start }
      assert.are.equal(2, op.state.TD7)
      assert.are.equal(1, op.state.TD8)
      assert.are.equal("unstable", op.stability, count)
      start.TD7 = 1
      assert.are.equal("stable", net:solve { method = "assumed", start = start }.stability, count)
    end
  end)
end)
