-- Test-rig glue: a Lua-driven bench rig logs rows of a 12 V pilot lamp's
-- sweep (set voltage, and the meter's reading as text with its unit).  Turn
-- the rows into a curve, fit within a tolerance, save the model file,
-- reload it elsewhere and solve a circuit with it.
-- The rows are INVENTED demo data: i = 20 mA * (v/1 V)^0.6 times
-- (1 + uniform noise of +-0.3 %), LCG seed 41 (see examples/data/generate.lua).
--   lua5.4 examples/rig_glue.lua [--quiet [outdir]]   (default out/examples)
local sw, say, outdir = dofile("examples/preamble.lua") { ... }

-- As the rig holds them: one table per reading.
local rows = {
  { v_set = 0.5, reading = "13.16 mA" }, { v_set = 1.0, reading = "20.06 mA" },
  { v_set = 1.5, reading = "25.5 mA" }, { v_set = 2.0, reading = "30.39 mA" },
  { v_set = 2.5, reading = "34.67 mA" }, { v_set = 3.0, reading = "38.64 mA" },
  { v_set = 3.5, reading = "42.34 mA" }, { v_set = 4.0, reading = "45.86 mA" },
  { v_set = 4.5, reading = "49.31 mA" }, { v_set = 5.0, reading = "52.64 mA" },
  { v_set = 5.5, reading = "55.61 mA" }, { v_set = 6.0, reading = "58.76 mA" },
  { v_set = 6.5, reading = "61.47 mA" }, { v_set = 7.0, reading = "64.16 mA" },
  { v_set = 7.5, reading = "67.03 mA" }, { v_set = 8.0, reading = "69.59 mA" },
  { v_set = 8.5, reading = "72.39 mA" }, { v_set = 9.0, reading = "74.74 mA" },
  { v_set = 9.5, reading = "77.39 mA" }, { v_set = 10.0, reading = "79.59 mA" },
  { v_set = 10.5, reading = "82.1 mA" }, { v_set = 11.0, reading = "84.17 mA" },
  { v_set = 11.5, reading = "86.58 mA" }, { v_set = 12.0, reading = "88.69 mA" },
  { v_set = 12.5, reading = "90.78 mA" }, { v_set = 13.0, reading = "93.16 mA" },
  { v_set = 13.5, reading = "95.33 mA" }, { v_set = 14.0, reading = "97.21 mA" },
}

-- Rows -> two columns; parse_si reads "13.16 mA" as 0.01316 (unit "A" checked).
local vs, is = {}, {}
for k, r in ipairs(rows) do
  local amps, unit = sw.parse_si(r.reading, "A")
  assert(unit == "A", ("row %d: expected a current, got %q"):format(k, r.reading))
  vs[k], is[k] = r.v_set, amps
end
local lamp = sw.curve.samples(vs, is)
say(("lamp: %d readings; filament %s cold (at %s), %s hot (at %s)"):format(#rows,
  sw.si(vs[1] / is[1], "Ω"), sw.si(vs[1], "V"), sw.si(vs[#vs] / is[#is], "Ω"), sw.si(vs[#vs], "V")))

-- The fewest segments within 0.5 mA of every reading.
local TOL = 0.5e-3
local model = sw.fit(lamp, { tol = TOL })
local info = model:fit_info()
say(("model: %d segments, max error %s (tolerance %s)"):format(model:nseg(),
  sw.si(info.max_abs, "A"), sw.si(TOL, "A")))

-- Save the model file, then load it as another script would.
local path = outdir .. "/pilot_lamp_model.csv"
model:save(path, { x_unit = "V", y_unit = "A" })
local loaded, xu, yu = sw.pwl.load(path)
say(("saved %s and reloaded it: %d segments, x in %s, y in %s"):format(path, loaded:nseg(), xu, yu))

-- The lamp on a 24 V supply through a 130 ohm dropping resistor, solved
-- with the fitted and with the reloaded model.
local function solve_with(m)
  local net = sw.network()
  net:vsource("VRAIL", "sup", "gnd", 24)
  net:resistor("RD", "sup", "lamp", 130)
  net:element("LP", "lamp", "gnd", m)
  return net:solve()
end
local op, op2 = solve_with(model), solve_with(loaded)
say("")
say(sw.report.op_table(op2))
local d = sw.compare_ops(op, op2)
say(("fitted vs reloaded model: largest difference %g V, %g A"):format(d.max.dv, d.max.di))

return { vs = vs, is = is, tol = TOL, model = model, loaded = loaded, path = path, x_unit = xu,
         y_unit = yu, op = op, op_loaded = op2, supply = 24, r = 130 }
