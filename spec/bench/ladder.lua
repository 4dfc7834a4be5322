-- Ladders of 10, 20 and 50 diodes: E through R to node 1, node j to node
-- j+1 through R, a diode from every node to ground; E swept over 2000
-- values.  segwise: net:sweep into an array with the fitted diode model in
-- every rung, once with Sherman-Morrison-Woodbury updates of the stored
-- inverse (the default) and once refactorising at every change of state
-- (lowrank = false).  Peer: Newton on the exact circuit (GSL's
-- gsl_multiroot_fdfsolver_newton with the analytic Jacobian), warm-started
-- from the previous point as the sweep is.
local sw = require "segwise"

local N, R, IS, NVT, FTOL, FIT_TOL = 2000, 1000.0, 1e-14, 0.02585, 1e-10, 3e-7

return function(B)
  local c = sw.curve.diode { is = IS, n = 1, vt = NVT, x = "v" }
  local m = sw.fit(c, { lo = 0, hi = 0.75, tol = FIT_TOL })
  local values = {}
  for k = 1, N do values[k] = 0.5 + 9.5 * (k - 1) / (N - 1) end
  local values_array = sw.array(values) -- sweeps take arrays: no table on the way in
  for _, size in ipairs { 10, 20, 50 } do
    local net = sw.network()
    net:vsource("VBUS", "n0", "0", 1)
    for j = 1, size do
      net:resistor("RSEG" .. j, "n" .. (j - 1), "n" .. j, R)
      net:element("DIODE" .. j, "n" .. j, "0", m, { x = "v" })
    end
    local params = { size, R, IS, NVT, FTOL }
    for k = 1, N do params[5 + k] = values[k] end
    local pfile, out = B.path("ladder_params.bin"), B.path("ladder_out.bin")
    B.write_doubles(pfile, params)
    local currents, info, info_full
    local med = B.rounds_of {
      { label = "segwise", run = function()
        local t = os.clock()
        local res = net:sweep("VBUS", values_array, { out = { "i.DIODE1" } })
        t = os.clock() - t
        if not currents then
          currents, info = {}, res
          for k = 1, N do currents[k] = res[1][k] end
        end
        return t
      end },
      { label = "refactor", run = function()
        local t = os.clock()
        local res = net:sweep("VBUS", values_array, { out = { "i.DIODE1" }, lowrank = false })
        t = os.clock() - t
        info_full = res
        return t
      end },
      { label = "gsl", run = function()
        return (B.peer(("%s ladder %s %s"):format(B.gsl, pfile, out)))
      end },
    }
    for k = 1, N do
      assert(math.abs(info_full[1][k] - currents[k]) <= 1e-10 * math.abs(currents[k]) + 1e-15,
        "ladder: refactorising and low-rank updates disagree")
    end
    local exact, w = B.read_doubles(out), 0
    for k = 1, N do w = math.max(w, math.abs(exact[k] - currents[k])) end
    assert(w <= 1e-5, ("ladder %d: segwise and Newton differ by %.3g A in D1"):format(size, w))
    local case = ("ladder of %d diodes, E 0.5..10 V"):format(size)
    B.row("ladder", case, N, "segwise net:sweep (assumed state, low-rank updates)", med.segwise,
      ("%.3g points/s; %.2f attempts a point; %d updates, %d factorisations; "
        .. "max abs(i_D1 - exact) %.2g A")
        :format(N / med.segwise, info.iterations / N, info.lowrank_updates, info.refactors, w))
    B.row("ladder", case, N,
      "segwise net:sweep, refactorising every change (lowrank = false)", med.refactor,
      ("%d factorisations"):format(info_full.refactors))
    B.row("ladder", case, N, "GSL multiroot Newton (exact)", med.gsl)
    B.ratio(("ladder_%d_vs_gsl_newton"):format(size), med.gsl, med.segwise)
    B.ratio(("ladder_%d_lowrank_vs_refactor"):format(size), med.refactor, med.segwise)
  end
  B.note("ladder: `ladder_N_lowrank_vs_refactor` compares the same sweep with low-rank updates "
    .. "(Sherman-Morrison-Woodbury, the stored inverse moved to each new state) and with "
    .. "`lowrank = false` (an LU factorisation at every change of state).")
end
