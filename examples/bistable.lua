-- A bistable element: a tunnel-diode-like device with an N-shaped i(v)
-- (an invented law: a tunnelling hump plus an ordinary diode), fed from a
-- source through a resistor.  Where the load line cuts the N three times
-- there are three operating points: the outer two stable, the middle one
-- not.  Sweeping the source up and then down shows the hysteresis.
--   lua5.4 examples/bistable.lua
local sw, say = dofile("examples/preamble.lua") { ... }

local IP, VP = 10e-3, 0.065              -- tunnelling peak: 10 mA at 65 mV
local IS, VT = 1e-10, 0.03               -- the diode that takes over above ~0.45 V
local function law(v)
  return IP * (v / VP) * math.exp(1 - v / VP) + IS * (math.exp(v / VT) - 1)
end
local E, R = 0.6, 60                     -- source (V) and series resistor (ohm)

local curve = sw.curve.fn(law, { lo = 0, hi = 0.6 })
local model = sw.fit(curve, { tol = 0.2e-3 })      -- within 0.2 mA
say(("N-shaped device: %d segments on 0 .. 600 mV, max error %s"):format(
  model:nseg(), sw.si(model:fit_info().max_abs, "A")))

local net = sw.network()
net:vsource("E", "in", "gnd", E)
net:resistor("R", "in", "a", R)
net:element("TD", "a", "gnd", model, { exact = curve })

local all = net:solve_all()
table.sort(all, function(p, q) return p.vd.TD < q.vd.TD end)
local points = {}
for k, op in ipairs(all) do
  points[k] = { n = k, v = op.vd.TD, i = op.i.TD, seg = op.state.TD, slope = model:slope(op.vd.TD),
                stability = op.stability }
end
say(("\nE = %s through R = %s: %d operating points"):format(sw.si(E, "V"), sw.si(R, "Ω"), #all))
say(sw.report.table(points, {
  { name = "point", key = "n" },
  { name = "v", key = "v", unit = "V" },
  { name = "i", key = "i", unit = "A" },
  { name = "segment", key = "seg" },
  { name = "di/dv", key = "slope", unit = "S" },
  { name = "", key = "stability" },
}))
say("With a small capacitance across the device, a point is stable when di/dv + 1/R > 0:")
say(("here 1/R = %s, so only the falling part of the N (di/dv < -1/R) is unstable.\n"):format(
  sw.si(1 / R, "S")))

-- Hysteresis: each sweep starts from the previous point (warm start).
local up, down = {}, {}
for k = 0, 18 do up[#up + 1] = 0.05 * k end
for k = #up, 1, -1 do down[#down + 1] = up[k] end
local rows_up, rows_down = net:sweep("E", up), net:sweep("E", down)
local hyst, back = {}, {}
for k, op in ipairs(rows_down) do back[down[k]] = op end
for k, op in ipairs(rows_up) do
  local b = back[up[k]]
  hyst[k] = { e = up[k], v_up = op.vd.TD, v_down = b.vd.TD, i_up = op.i.TD, i_down = b.i.TD,
              differ = math.abs(op.vd.TD - b.vd.TD) > 1e-3 and "two states" or "" }
end
net:set("E", E)
say("source swept up, then down (warm-started):")
say(sw.report.table(hyst, {
  { name = "E", key = "e", fmt = "%.2f", unit = "V" },
  { name = "v going up", key = "v_up", unit = "V" },
  { name = "v going down", key = "v_down", unit = "V" },
  { name = "i up", key = "i_up", unit = "A" },
  { name = "i down", key = "i_down", unit = "A" },
  { name = "", key = "differ" },
}))

return { model = model, curve = curve, law = law, e = E, r = R, points = points, hysteresis = hyst }
