-- The demo study (`make demo`): a silicon rectifier diode in series with a
-- 10 ohm load, protecting it against a reversed supply.  How much voltage
-- does the load lose, and how much does the diode dissipate, as the supply
-- is set from 0 to 9 V?
--   1. fit the measured diode (invented demo data) with several schemes
--   2. choose a model, solve the circuit at 5 V, compare with the data itself
--   3. sweep the supply; tables and SVG plots into a folder named at the end
--   lua5.4 examples/demo_study.lua [outdir]            (default ./out/demo)
--   lua5.4 examples/demo_study.lua --quiet [outdir]    (no printing; for specs)
local sw, say, outdir = dofile("examples/preamble.lua") { default = "out/demo", ... }
local quiet = (...) == "--quiet"

local DATA, RL, VNOM = "examples/data/rectifier_iv.csv", 10, 5.0
local function heading(s) say(("\n%s\n%s"):format(s, ("="):rep(utf8.len(s)))) end

---------------------------------------------------------------- 1. fitting
local diode = sw.curve.read(DATA, { x = "V_V", y = "I_mA", scale = { y = 1e-3 } })
local vlo, vhi = diode:domain()
local npts = #(diode:points())
heading("1. The device: silicon rectifier diode, measured i(v)")
say(("%s: %d points, %s .. %s, up to %s (INVENTED demo data)"):format(
  DATA, npts, sw.si(vlo, "V"), sw.si(vhi, "V"), sw.si(diode(vhi), "A")))

local TOL, RTOL, FLOOR = 5e-3, 0.05, 1e-3
local fits = {
  { name = "uniform, 6 seg", model = sw.fit(diode, { segments = 6, knots = "uniform" }) },
  { name = "curvature, 6 seg", model = sw.fit(diode, { segments = 6, knots = "curvature" }) },
  { name = "optimal, 6 seg", model = sw.fit(diode, { segments = 6, knots = "optimal" }) },
  { name = "least squares, 6 seg", model = sw.fit(diode, { segments = 6, criterion = "lsq" }) },
  { name = "within 5 mA", model = sw.fit(diode, { tol = TOL }) },
  { name = "within 5 % (1 mA floor)",
    model = sw.fit(diode, { tol = RTOL, error = "rel", rel_floor = FLOOR, monotone = true }) },
}
say("\nfits compared against the measured points (minimax unless stated; relative errors\n"
  .. "are taken against at least 1 mA, so the noise floor near 0 V does not swamp them):")
say(sw.report.compare_fits(fits, diode, { x = "V", y = "A", range = { rel_floor = FLOOR } }))
local chosen = fits[#fits].model
say("The load current will span 0.1 mA .. 0.8 A, so the relative fit is chosen: it keeps")
say(("small currents right where an absolute band of %s would not. Its %d segments:"):format(
  sw.si(TOL, "A"), chosen:nseg()))
say(sw.report.fit_table(chosen, { x = "V", y = "A", cell_units = "header" }))

---------------------------------------------------------------- 2. one point
heading(("2. The circuit at %s: supply -> DIODE -> %s load"):format(sw.si(VNOM, "V"),
  sw.si(RL, "Ω")))
local net = sw.network()
net:vsource("VS", "sup", "gnd", VNOM)
net:element("DIODE", "sup", "out", chosen, { x = "v", exact = diode, pmax = 1.0 })
net:resistor("RL", "out", "gnd", RL)
say(tostring(net))
say("")
local op = net:solve()
say(sw.report.op_table(op))
local ex = net:solve { exact = true }
local d = sw.compare_ops(op, ex)
say(("against the measured curve itself (Newton from the PWL point): DIODE differs by %s "
  .. "and %s (%.3f %%)"):format(
  sw.si(d.DIODE.dv, "V"), sw.si(d.DIODE.di, "A"), d.DIODE.rel_i * 100))

---------------------------------------------------------------- 3. the sweep
heading("3. Supply swept from 0.5 V to 9 V")
local supplies = {}
for k = 1, 18 do supplies[#supplies + 1] = 0.5 * k end
local ops = net:sweep("VS", supplies)
local rows = {}
for k, o in ipairs(ops) do
  net:set("VS", supplies[k])
  local e = net:solve { exact = true }
  rows[k] = { vs = supplies[k], v_load = o.v.out, i = o.i.DIODE, i_data = e.i.DIODE,
              v_d = o.vd.DIODE, p_d = o.p.DIODE, p_load = o.p.RL, seg = o.state.DIODE,
              loss = supplies[k] > 0 and (1 - o.v.out / supplies[k]) * 100 or 0 }
end
net:set("VS", VNOM)
say(sw.report.table(rows, {
  { name = "supply", key = "vs", fmt = "%.1f", unit = "V" },
  { name = "V load", key = "v_load", fmt = "%.3f", unit = "V" },
  { name = "I", key = "i", unit = "A" },
  { name = "I measured", key = "i_data", unit = "A" },
  { name = "V diode", key = "v_d", fmt = "%.3f", unit = "V" },
  { name = "P diode", key = "p_d", unit = "W" },
  { name = "P load", key = "p_load", fmt = "%.3f", unit = "W" },
  { name = "lost", key = "loss", fmt = "%.1f", unit = "%" },
  { name = "segment", key = "seg" },
}))
local last = rows[#rows]
say(("At 9 V the diode drops %s and dissipates %s (rating used here: 1 W)."):format(
  sw.si(last.v_d, "V"), sw.si(last.p_d, "W")))

-- A quick look in the terminal (no colour, so it pastes anywhere).
local xs, ys = {}, {}
for k, r in ipairs(rows) do xs[k], ys[k] = r.vs, r.i end
sw.plot.term({ title = "load current against supply", x = { label = "supply", unit = "V" },
               y = { label = "current", unit = "A" },
               series = { { x = xs, y = ys, label = "PWL" } } },
             { width = 64, height = 14, color = false, print = not quiet })

---------------------------------------------------------------- plots
local plots = {}
local function plot(name, spec)
  local path = outdir .. "/" .. name
  sw.plot.svg(path, spec)
  plots[#plots + 1] = path
end
local V = { label = "diode voltage", unit = "V" }
local fspec = sw.plot.fit_spec(diode, fits,
  { x = V, y = { label = "diode current", unit = "A" }, curve_label = "measured" })
fspec.title = "Rectifier diode: measured points and PWL models"
plot("fits.svg", fspec)
local espec = sw.plot.error_spec(diode, fits,
  { x = V, y = { label = "model - measured", unit = "A" } })
espec.title = "Error of each model against the measured points"
plot("errors.svg", espec)

-- Load lines i = (VS - v)/RL over the device, with the operating points.
local pxs, pys = diode:points()
local kxs, kys = chosen:knots()
local series = { { x = pxs, y = pys, label = "measured", style = "points" },
                 { x = kxs, y = kys, label = "PWL model" } }
local marks = {}
for _, vs in ipairs { 3, 5, 7, 9 } do
  local r = rows[vs * 2]
  series[#series + 1] = { x = { vlo, vhi }, y = { (vs - vlo) / RL, (vs - vhi) / RL },
                          label = ("load line, %s"):format(sw.si(vs, "V")) }
  marks[#marks + 1] = { x = r.v_d, y = r.i, label = sw.si(r.i, "A") }
end
plot("loadlines.svg", {
  title = ("Load lines through %s, supplies 3, 5, 7, 9 V"):format(sw.si(RL, "Ω")),
  x = V, y = { label = "current", unit = "A", min = 0, max = 1.0 }, series = series, marks = marks,
  marks_label = "operating points" })

local sx, si_pwl, si_data, sp = {}, {}, {}, {}
for k, r in ipairs(rows) do sx[k], si_pwl[k], si_data[k], sp[k] = r.vs, r.i, r.i_data, r.p_d end
plot("sweep.svg", { title = "Load current against supply", x = { label = "supply", unit = "V" },
  y = { label = "current", unit = "A" },
  series = { { x = sx, y = si_pwl, label = "PWL model" },
             { x = sx, y = si_data, label = "measured curve (Newton)", style = "points" } } })
plot("diode_power.svg", { title = "Diode dissipation against supply",
  x = { label = "supply", unit = "V" }, y = { label = "power", unit = "W" },
  series = { { x = sx, y = sp, label = "P(DIODE)", marker = true } } })

heading("Caution")
say("A PWL model is an approximation, good only over the range it was fitted on")
say(("(here %s .. %s). Check the real device's ratings (current, power, temperature)"):format(
  sw.si(vlo, "V"), sw.si(vhi, "V")))
say("in its datasheet before trusting any operating point. For mains or high-energy")
say("circuits follow local electrical codes and licensed practice.")

say(("\nplots (%d SVG files) written to %s/:"):format(#plots, outdir))
for _, p in ipairs(plots) do say("  " .. p) end

return { curve = diode, fits = fits, chosen = chosen, tol = TOL, rl = RL, vnom = VNOM, op = op,
         exact = ex, rows = rows, plots = plots, outdir = outdir }
