-- Choosing breakpoints: one measured Schottky diode, five ways to place the
-- knots, one comparison table and two plots (the fits, and their errors).
--   lua5.4 examples/breakpoints.lua [--quiet [outdir]]   (default out/examples)
local sw, say, outdir = dofile("examples/preamble.lua") { ... }

-- i(v), current in mA in the file.
local diode = sw.curve.read("examples/data/schottky_iv.csv",
  { x = "V_V", y = "I_mA", scale = { y = 1e-3 } })
local lo, hi = diode:domain()
-- segments for the fixed-count schemes; amps for the tolerance fit
local SEGMENTS, TOL = 6, 0.002

local fits = {}
for _, scheme in ipairs { "uniform", "geometric", "curvature", "optimal" } do
  fits[#fits + 1] = { name = scheme .. " knots", scheme = scheme,
                      model = sw.fit(diode, { segments = SEGMENTS, knots = scheme }) }
end
-- Tolerance-driven: the fewest segments whose error stays within TOL.
fits[#fits + 1] = { name = ("within %s"):format(sw.si(TOL, "A")), scheme = "within_tol",
                    model = sw.fit(diode, { tol = TOL }) }

local xs = diode:points()
say(("Schottky diode, %d measured points, %s .. %s; minimax fits (absolute error)"):format(
  #xs, sw.si(lo, "V"), sw.si(hi, "V")))
say(sw.report.compare_fits(fits, diode, { x = "V", y = "A" }))
say("At equal segment counts the optimal knots give the smallest worst-case error.")
say("Geometric knots crowd the low end, where this exponential is flat: the wrong")
say("place for a diode's i(v).  The tolerance fit answers the other question: how")
say("few segments meet a stated error.  Relative errors are large near 0.1 V because")
say("an absolute fit spends nothing on microamps; fit with error = \"rel\" if they matter.\n")

local fit_path, err_path = outdir .. "/breakpoints_fits.svg", outdir .. "/breakpoints_errors.svg"
local axes = { x = { label = "diode voltage", unit = "V" },
               y = { label = "diode current", unit = "A" } }
local spec = sw.plot.fit_spec(diode, fits, { x = axes.x, y = axes.y, curve_label = "measured" })
spec.title = "Schottky diode: measured points and five PWL models"
sw.plot.svg(fit_path, spec)
local espec = sw.plot.error_spec(diode, fits,
  { x = axes.x, y = { label = "model - measured", unit = "A" } })
espec.title = "Error of each model against the measured points"
sw.plot.svg(err_path, espec)
say("plots: " .. fit_path .. ", " .. err_path)

local result = { curve = diode, fits = fits, tol = TOL, segments = SEGMENTS,
                 plots = { fit_path, err_path } }
for _, f in ipairs(fits) do result[f.scheme] = f.model end
return result
