-- Peak memory of a 1e7-point evaluation against the size of the data
-- (8 bytes a point), read from VmHWM in a child process; numpy.interp's
-- peak for the same job beside it.
local N = 10000000

local function field(out, name)
  return tonumber(out:match(name .. " (%d+)"))
end

return function(B)
  local lua = arg and arg[-1] or "lua5.4"
  local data, mib = 8 * N, 1024 * 1024
  local case = "peak RSS of 1e7-point m:eval, input 80 MB"
  local peak, base, inplace
  for _, mode in ipairs { "fresh", "inplace" } do
    local ok, out = B.sh(("%s spec/bench/memory_child.lua %d %s"):format(lua, N, mode))
    assert(ok and field(out, "peak"), "memory child failed: " .. out)
    local b, p = field(out, "base"), field(out, "peak")
    if mode == "fresh" then
      peak, base = p, b
      B.row("memory", case, N, "segwise y = m:eval(x) (whole process)", nil,
        ("%.0f MiB = %.2fx the data (interpreter and module %.0f MiB, input, result)"):format(
          p / mib, p / data, b / mib))
      B.row("memory", case, N, "segwise y = m:eval(x) (above the loaded interpreter)", nil,
        ("%.0f MiB = %.2fx the data"):format((p - b) / mib, (p - b) / data))
    else
      inplace = p
      B.row("memory", case, N, "segwise m:eval(x, x) in place (whole process)", nil,
        ("%.0f MiB = %.2fx the data"):format(p / mib, p / data))
    end
  end
  if B.python then
    local file = B.path("mem_points.bin")
    assert(B.sh(("%s gen %d 99 random 0 0.75 %s"):format(B.gsl, N, file)))
    local script = ("import numpy as np\n" ..
      "def hwm():\n" ..
      "  return int(open('/proc/self/status').read().split('VmHWM:')[1].split()[0]) * 1024\n" ..
      "xp = np.linspace(0, 0.75, 65); fp = xp ** 2\nbase = hwm()\n" ..
      "x = np.fromfile('%s', dtype='<f8')\n" ..
      "y = np.interp(x, xp, fp)\nprint('base %%d peak %%d' %% (base, hwm()))\n"):format(file)
    local sfile = B.path("mem.py")
    local f = assert(io.open(sfile, "w"))
    f:write(script)
    f:close()
    local okp, outp = B.sh(B.python .. " " .. sfile)
    assert(okp and field(outp, "peak"), "numpy memory child failed: " .. outp)
    local pb, pp = field(outp, "base"), field(outp, "peak")
    B.row("memory", "peak RSS of 1e7-point m:eval, input 80 MB", N,
      "numpy.interp (whole process)", nil,
      ("%.0f MiB = %.2fx the data (interpreter and numpy %.0f MiB)"):format(pp / mib, pp / data,
        pb / mib))
    B.ratio("memory_1e7_peak_vs_numpy", pp, peak)
  end
  B.note(("peak memory of a 1e7-point evaluation (target < 2x the data): into a new array "
    .. "%.2fx the data for the whole process (%.2fx above the loaded interpreter: input + "
    .. "result), %s; in place or into an existing array (m:eval(x, out)) %.2fx, %s")
    :format(peak / data, (peak - base) / data, peak < 2 * data and "met" or "missed",
      inplace / data, inplace < 2 * data and "met" or "missed"))
end
