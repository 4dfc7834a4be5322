-- Helpers for the benchmark: temporary files, peer processes, the shared
-- data generator, A-B-A-B rounds with medians, ratio lines and the table.
-- Every side reports process CPU time (os.clock here, CLOCK_PROCESS_CPUTIME_ID
-- in the C peer, time.process_time in python), so other load on the machine
-- disturbs the figures as little as possible.
local sw = require "segwise"

local B = { rows = {}, ratios = {}, notes = {}, rounds = 5 }

local function sh(cmd)
  local p = assert(io.popen(cmd .. " 2>&1"))
  local out = p:read("a")
  local ok, _, code = p:close()
  return ok, out, code
end
B.sh = sh

function B.setup()
  local ok, dir = sh("mktemp -d /tmp/segwise-bench.XXXXXX")
  assert(ok, "mktemp failed: " .. dir)
  B.dir = dir:gsub("%s+$", "")
  -- The C peer, built here with the same compiler the module uses.
  local peer = B.dir .. "/peer_gsl"
  local okc, msg = sh(("${CC:-cc} -std=c99 -O2 -o %s spec/bench/peer_gsl.c "
    .. "$(pkg-config --cflags --libs gsl 2>/dev/null || echo -lgsl -lgslcblas) -lm"):format(peer))
  assert(okc, "building spec/bench/peer_gsl.c failed:\n" .. msg)
  B.gsl = peer
  -- Debian's python3 (a python3 earlier on PATH may lack numpy).
  local fh = io.open("/usr/bin/python3")
  local py = fh and "/usr/bin/python3" or "python3"
  if fh then fh:close() end
  local okp, ver = sh(py .. " -c 'import numpy, scipy; "
    .. "print(numpy.__version__, scipy.__version__)'")
  if okp then
    B.python, B.numpy_version = py, ver:gsub("%s+$", "")
  else
    B.note("python3-numpy/scipy not importable: numpy and scipy peers skipped ("
      .. ver:gsub("%s+$", "") .. ")")
  end
end

function B.cleanup()
  if B.dir and B.dir:match("^/tmp/segwise%-bench%.") then os.execute("rm -rf " .. B.dir) end
end

function B.path(name) return B.dir .. "/" .. name end

function B.note(s) B.notes[#B.notes + 1] = s end

-- Runs a peer; returns its time and check value.
function B.peer(cmd)
  local ok, out = sh(cmd)
  local t, check = out:match("time (%S+) check (%S+)")
  if not ok or not t then error("peer failed: " .. cmd .. "\n" .. out) end
  return tonumber(t), tonumber(check)
end

-- xorshift64 uniforms in [0, 1), bit for bit as peer_gsl.c's next_uniform.
function B.generator(seed)
  local s = seed
  return function()
    s = s ~ (s << 13)
    s = s ~ (s >> 7)
    s = s ~ (s << 17)
    return (s >> 11) * (1.0 / 9007199254740992.0)
  end
end

-- Fills a new array with n points in [lo, hi): "random" order or "sorted".
function B.points(n, seed, order, lo, hi)
  local a, u, w = sw.array(n), B.generator(seed), hi - lo
  if order == "sorted" then
    for i = 1, n do a[i] = lo + w * (((i - 1) + u()) / n) end
  else
    for i = 1, n do a[i] = lo + w * u() end
  end
  return a
end

-- Sum of every 97th value (1-based positions 1, 98, ...), as the peers do.
function B.fingerprint(a, n)
  local s = 0.0
  for i = 1, n or #a, 97 do s = s + a[i] end
  return s
end

function B.write_doubles(path, list)
  local f = assert(io.open(path, "wb"))
  for i = 1, #list, 1000 do
    local chunk = {}
    for j = i, math.min(#list, i + 999) do chunk[#chunk + 1] = list[j] end
    f:write(string.pack("<" .. string.rep("d", #chunk), table.unpack(chunk)))
  end
  f:close()
end

function B.read_doubles(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  local out, pos = {}, 1
  for i = 1, #s // 8 do out[i], pos = string.unpack("<d", s, pos) end
  return out
end

local function median(t)
  local c = {}
  for i, v in ipairs(t) do c[i] = v end
  table.sort(c)
  local n = #c
  return n % 2 == 1 and c[(n + 1) // 2] or 0.5 * (c[n // 2] + c[n // 2 + 1])
end
B.median = median

-- Runs every side once per round, in the same order each round (A B A B),
-- for B.rounds rounds; each side is a function returning seconds.  Returns
-- the medians by label.
function B.rounds_of(sides, rounds)
  local times = {}
  for _, s in ipairs(sides) do times[s.label] = {} end
  for _ = 1, rounds or B.rounds do
    for _, s in ipairs(sides) do
      collectgarbage()
      local t = times[s.label]
      t[#t + 1] = s.run()
    end
  end
  local med = {}
  for label, t in pairs(times) do med[label] = median(t) end
  return med
end

-- One line per peer: bench NAME ratio X, X = peer time / segwise time.
function B.ratio(name, peer_time, sw_time)
  local x = peer_time / sw_time
  B.ratios[#B.ratios + 1] = { name = name, ratio = x }
  print(("bench %s ratio %.3g"):format(name, x))
  io.stdout:flush()
  return x
end

-- A table row: section, case, size, side, seconds, extra.
function B.row(section, case, size, side, seconds, extra)
  B.rows[#B.rows + 1] = { section = section, case = case, size = size, side = side,
                          seconds = seconds, extra = extra or "" }
end

function B.machine()
  local f = io.open("/proc/cpuinfo")
  local cpu = "unknown CPU"
  if f then
    local s = f:read("a")
    f:close()
    cpu = s:match("model name%s*:%s*([^\n]+)") or cpu
  end
  local _, np = sh("nproc")
  local _, mem = sh("awk '/MemTotal/ {printf \"%.1f GiB\", $2/1048576}' /proc/meminfo")
  local _, kernel = sh("uname -sr")
  return {
    cpu = cpu, nproc = np:gsub("%s+$", ""), mem = mem:gsub("%s+$", ""),
    kernel = kernel:gsub("%s+$", ""),
  }
end

local function fmt_time(s)
  if s >= 1 then return ("%.3g s"):format(s) end
  if s >= 1e-3 then return ("%.3g ms"):format(s * 1e3) end
  return ("%.3g µs"):format(s * 1e6)
end
B.fmt_time = fmt_time

local function fmt_size(n)
  if type(n) ~= "number" then return tostring(n) end
  local e = math.floor(math.log(n, 10) + 1e-9)
  if n == 10 ^ e then return "1e" .. e end
  return tostring(n)
end

-- The markdown report: machine, ratio lines, the table, notes.
function B.markdown(date, machine)
  local out = {}
  local function add(s) out[#out + 1] = s end
  add("# segwise benchmark results")
  add("")
  add(("Run %s on %s, %s CPUs (nproc), %s RAM, %s; %s; median of %d rounds, A B A B; "
    .. "times are process CPU time.")
    :format(date, machine.cpu, machine.nproc, machine.mem, machine.kernel, _VERSION, B.rounds))
  if B.numpy_version then add(("Peers: numpy/scipy %s (Debian python3), GSL %s.")
    :format(B.numpy_version:gsub(" ", "/"), machine.gsl or "?")) end
  add("")
  add("| section | case | size | side | median time | notes |")
  add("|---|---|---|---|---|---|")
  for _, r in ipairs(B.rows) do
    add(("| %s | %s | %s | %s | %s | %s |"):format(r.section, r.case, fmt_size(r.size), r.side,
      r.seconds and fmt_time(r.seconds) or "-", r.extra))
  end
  add("")
  add("Ratios, peer / segwise, above 1 means segwise is better: time, or peak memory for memory_*;")
  add("for fit_tol_* the target time over segwise's time:")
  add("")
  for _, r in ipairs(B.ratios) do add(("    bench %s ratio %.3g"):format(r.name, r.ratio)) end
  if #B.notes > 0 then
    add("")
    add("Targets and notes:")
    add("")
    for _, n in ipairs(B.notes) do add("- " .. n) end
  end
  return table.concat(out, "\n") .. "\n"
end

return B
