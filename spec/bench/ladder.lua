-- Ladders of 10, 20 and 50 diodes: E through R to node 1, node j to node
-- j+1 through R, a diode from every node to ground; E swept over 2000
-- values.  segwise: net:sweep with the fitted diode model in every rung.
-- Peer: Newton on the exact circuit (GSL's gsl_multiroot_fdfsolver_newton
-- with the analytic Jacobian), warm-started from the previous point as the
-- sweep is.  Low-rank updates against refactorising every step need a
-- switch the solver does not expose (see the notes).
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
    net:vsource("E", "n0", "0", 1)
    for j = 1, size do
      net:resistor("R" .. j, "n" .. (j - 1), "n" .. j, R)
      net:element("D" .. j, "n" .. j, "0", m, { x = "v" })
    end
    local params = { size, R, IS, NVT, FTOL }
    for k = 1, N do params[5 + k] = values[k] end
    local pfile, out = B.path("ladder_params.bin"), B.path("ladder_out.bin")
    B.write_doubles(pfile, params)
    local currents, updates
    local med = B.rounds_of {
      { label = "segwise", run = function()
        local t = os.clock()
        local rows = net:sweep("E", values_array)
        t = os.clock() - t
        if not currents then
          currents, updates = {}, 0
          for k = 1, N do
            currents[k] = rows[k].i.D1
            updates = updates + (rows[k].iterations or 0)
          end
        end
        return t
      end },
      { label = "gsl", run = function() return (B.peer(("%s ladder %s %s"):format(B.gsl, pfile, out))) end },
    }
    local exact, w = B.read_doubles(out), 0
    for k = 1, N do w = math.max(w, math.abs(exact[k] - currents[k])) end
    assert(w <= 1e-5, ("ladder %d: segwise and Newton differ by %.3g A in D1"):format(size, w))
    local case = ("ladder of %d diodes, E 0.5..10 V"):format(size)
    B.row("ladder", case, N, "segwise net:sweep (assumed state)", med.segwise,
      ("%.3g points/s; %.1f iterations a point; max abs(i_D1 - exact) %.2g A")
        :format(N / med.segwise, updates / N, w))
    B.row("ladder", case, N, "GSL multiroot Newton (exact)", med.gsl)
    B.ratio(("ladder_%d_vs_gsl_newton"):format(size), med.gsl, med.segwise)
  end
  B.note("ladder: low-rank updates against refactorising every step is not measured: the solver "
    .. "exposes no switch to turn its updates off (requested).")
end
