-- A load line that lies along a device's segment meets it in a whole
-- interval: one result with op.continuum, not its two ends as two points.
-- The circuits are invented; the geometry is hand algebra (noted per case).
local sw = require "segwise"

-- An N-shaped i(v) model (invented): segment 2 runs from (0.2 V, 4 mA) to
-- (0.6 V, 0) with slope -10 mS, which is -1/(100 ohm).
local function ndev() return sw.pwl { x = { 0, 0.2, 0.6, 1 }, y = { 0, 4e-3, 0, 5e-3 } } end

local function circuit(volts, model, x)
  local net = sw.network()
  net:vsource("VS", "a", "gnd", volts)
  net:resistor("RL", "a", "b", 100)
  net:element("NDEV", "b", "gnd", model, { x = x or "v" })
  return net
end

describe("segwise.network continuum of operating points", function()
  it("solve_all reports the segment as one result", function()
    -- load line i = (0.6 - v)/100 passes (0.2, 4 mA) and (0.6, 0): the segment's own line
    local all = circuit(0.6, ndev()):solve_all()
    assert.are.equal(1, #all)
    local op = all[1]
    assert.is.near(0.2, op.continuum.lo, 1e-12)
    assert.is.near(0.6, op.continuum.hi, 1e-12)
    assert.are.equal(2, op.continuum.segment)
    assert.is_false(op.unique)
    assert.matches("continuum", op.unique_reason)
    assert.are.equal(1, op.nfound)
  end)

  it("solve says so instead of 'two operating points'", function()
    local op = circuit(0.6, ndev()):solve()
    assert.is_table(op.continuum)
    local text = table.concat(op.warnings, "\n")
    assert.matches("continuum of operating points, v from 0.2 to 0.6 V", text)
    assert.is_nil(text:find("operating points exist", 1, true))
  end)

  it("a parallel load line off the segment is no continuum", function()
    -- 0.7 V: the load line is parallel to segment 2 but 1 mA above it; it
    -- meets segment 3 (slope 12.5 mS from 0.6 V) at v = 0.0145/0.0225 V
    local all = circuit(0.7, ndev()):solve_all()
    assert.are.equal(1, #all)
    assert.is_nil(all[1].continuum)
    assert.is.near(0.0145 / 0.0225, all[1].vd.NDEV, 1e-12)
  end)

  it("works for a v(i) model too", function()
    -- v(i): segment 2 from (1 mA, 0.5 V) to (5 mA, 0.1 V), slope -100 ohm:
    -- the load line v = 0.6 - 100 i itself (a rising segment 3 after it)
    local m = sw.pwl { x = { 0, 1e-3, 5e-3, 6e-3 }, y = { 0, 0.5, 0.1, 0.3 } }
    local all = circuit(0.6, m, "i"):solve_all()
    assert.are.equal(1, #all)
    assert.are.equal("i", all[1].continuum.x)
    assert.is.near(1e-3, all[1].continuum.lo, 1e-15)
    assert.is.near(5e-3, all[1].continuum.hi, 1e-15)
  end)
end)
