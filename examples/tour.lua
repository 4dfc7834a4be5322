-- The README's tour: a diode law, a 4-segment minimax model over the range
-- where the diode will work, and that model solved in a small circuit.
-- (Device values are invented for illustration.)
local sw = dofile("examples/preamble.lua") { "out" }

-- A small-signal silicon diode (invented values): i(v) from 0.6 V to 0.8 V.
local d = sw.curve.diode { is = 2.5e-9, n = 1.9, rs = 0.6 }
local m = sw.fit(d, { lo = 0.6, hi = 0.8, segments = 4, criterion = "minimax" })
print(m)
local info = m:fit_info()
print(("max error %s at v = %s"):format(sw.si(info.max_abs, "A"), sw.si(info.x_abs, "V")))
for k = 1, m:nseg() do
  local j, g = m:thevenin(k) -- i = j + g*v: a current source beside a conductance
  print(("segment %d: i = %s + v / %s"):format(k, sw.si(j, "A"), sw.si(1 / g, "Ω")))
end

-- 5 V through 470 ohm into the diode: assumed-state solution with its trace.
local net = sw.network()
net:vsource("VS", "in", "gnd", 5)
net:resistor("RSER", "in", "a", 470)
net:element("DIODE", "a", "gnd", m, { exact = d })
local op = net:solve { method = "assumed", trace = true }
print(op.trace)
local ex = net:solve { exact = true }
print(("PWL: %s at %s   exact: %s at %s"):format(sw.si(op.i.DIODE, "A"), sw.si(op.v.a, "V"),
  sw.si(ex.i.DIODE, "A"), sw.si(ex.v.a, "V")))

-- The curve, the model with its knots, and the operating point, as an SVG.
local spec = sw.plot.fit_spec(d, { { name = "4-segment minimax", model = m } },
  { x = { label = "diode voltage", unit = "V" }, y = { label = "diode current", unit = "A" } })
spec.title = "Diode law and its PWL model; the operating point with 470 Ω from 5 V"
spec.series[#spec.series + 1] = { x = { 0.6, 0.8 }, y = { (5 - 0.6) / 470, (5 - 0.8) / 470 },
  label = "load line: 5 V through 470 Ω" }
spec.marks = spec.marks or {}
spec.marks[#spec.marks + 1] = { x = op.v.a, y = op.i.DIODE, label = "operating point" }
sw.plot.svg("out/tour.svg", spec)
print("plot written to out/tour.svg")
