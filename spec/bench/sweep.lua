-- A single-device circuit swept over 1e5 source values: source E, 1 kOhm,
-- a silicon-like diode (Is = 1e-14 A, n = 1, Vt = 25.85 mV) to ground.
-- segwise: the diode fitted once to 0.3 uA (so the swept currents agree with
-- the exact ones to 1e-6 A), then net:sweep into an array (opts.out: the
-- loop runs in C, no table per point).  Peers: the exact circuit solved
-- per point by a bracketing root finder: GSL's Brent in C and
-- scipy.optimize.brentq in python3, both to 1e-5 V in the diode voltage
-- (1e-8 A in the current taken from the resistor).
local sw = require "segwise"

local N, R, IS, NVT, XTOL, FIT_TOL = 100000, 1000.0, 1e-14, 0.02585, 1e-5, 3e-7

return function(B)
  local c = sw.curve.diode { is = IS, n = 1, vt = NVT, x = "v" }
  local t_fit = os.clock()
  local m = sw.fit(c, { lo = 0, hi = 0.75, tol = FIT_TOL })
  t_fit = os.clock() - t_fit
  local net = sw.network()
  net:vsource("VBUS", "a", "0", 1)
  net:resistor("RSER", "a", "b", R)
  net:element("DIODE", "b", "0", m, { x = "v" })
  local values = {}
  for k = 1, N do values[k] = 0.5 + 9.5 * (k - 1) / (N - 1) end
  local values_array = sw.array(values) -- sweeps take arrays: no table on the way in
  local params = { R, IS, NVT, XTOL }
  for k = 1, N do params[4 + k] = values[k] end
  local pfile, gout, pout = B.path("sweep_params.bin"), B.path("sweep_gsl.bin"),
    B.path("sweep_py.bin")
  B.write_doubles(pfile, params)
  local currents
  local sides = {
    { label = "segwise", run = function()
      local t = os.clock()
      local res = net:sweep("VBUS", values_array, { out = { "i.DIODE" } })
      t = os.clock() - t
      if not currents then
        currents = {}
        for k = 1, N do currents[k] = res[1][k] end
      end
      return t
    end },
    { label = "gsl", run = function()
      return (B.peer(("%s brent %s %s"):format(B.gsl, pfile, gout)))
    end },
  }
  if B.python then
    sides[#sides + 1] = { label = "scipy", run = function()
      return (B.peer(("%s spec/bench/peer_numpy.py brentq %s %s"):format(B.python, pfile, pout)))
    end }
  end
  local med = B.rounds_of(sides)
  -- The answers must agree to 1e-6 A for the comparison to count.
  local function worst(file)
    local exact, w = B.read_doubles(file), 0
    assert(#exact == N, "peer wrote " .. #exact .. " currents")
    for k = 1, N do w = math.max(w, math.abs(exact[k] - currents[k])) end
    return w
  end
  local wg = worst(gout)
  assert(wg <= 1e-6, ("segwise and GSL Brent currents differ by %.3g A (> 1e-6 A)"):format(wg))
  local case = ("E 0.5..10 V, 1 kOhm + diode, model %d segments"):format(m:nseg())
  B.row("sweep", case, N, "segwise net:sweep into an array", med.segwise,
    ("%.3g operating points/s; fit %s; max abs(i - exact) %.2g A"):format(N / med.segwise,
      B.fmt_time(t_fit), wg))
  B.row("sweep", case, N, "GSL Brent per point (exact)", med.gsl)
  B.ratio("sweep_1dev_1e5_vs_gsl_brent", med.gsl, med.segwise)
  if med.scipy then
    local ws = worst(pout)
    assert(ws <= 1e-6, ("segwise and scipy brentq currents differ by %.3g A"):format(ws))
    B.row("sweep", case, N, "scipy.optimize.brentq per point (exact)", med.scipy)
    B.ratio("sweep_1dev_1e5_vs_scipy_brentq", med.scipy, med.segwise)
  end
  B.note(("sweep of one device: %.3g operating points/s (target >= 2e6: %s); %.2fx GSL Brent "
    .. "on the exact circuit (target >= 10x: %s)")
    :format(N / med.segwise, N / med.segwise >= 2e6 and "met" or "missed",
      med.gsl / med.segwise, med.gsl / med.segwise >= 10 and "met" or "missed"))
end
