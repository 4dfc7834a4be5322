-- A Lua snippet run in a child process with this run's module paths, under
-- limits a spec cannot set on itself: a file-size limit (writes beyond it
-- fail with EFBIG, even for root) or another user (root's permission
-- checks pass where a user's fail).  Shared by the file-writing specs.
local files = require "helpers.files"
local M = {}

local function q(s) return "'" .. tostring(s):gsub("'", "'\\''") .. "'" end

-- True when the specs run as root and can run a child as nobody that loads
-- the module (an installed tree in a private temporary directory is out of
-- nobody's reach: then the permission check is the caller's own).
function M.root_can_drop()
  local id = files.lines_of("id -u")[1]
  if id ~= "0" or os.execute("command -v setpriv >/dev/null 2>&1") ~= true then return false end
  return (M.lua('require "segwise"', { nobody = true }))
end

--- Runs `code` in lua5.4; returns success (exit 0) and everything it printed.
-- opts.fsize: the file-size limit in 512-byte blocks (SIGXFSZ ignored, so a
-- write beyond it fails instead of killing the child); opts.nobody: run as
-- the user nobody (needs root, see root_can_drop).
function M.lua(code, opts)
  opts = opts or {}
  local script = files.tmpname() .. ".lua"
  local f = assert(io.open(script, "wb"))
  f:write(code)
  f:close()
  assert(os.execute("chmod 644 " .. q(script)))
  local pre = {}
  if opts.fsize then pre[#pre + 1] = "trap '' XFSZ; ulimit -f " .. opts.fsize .. ";" end
  local run = "exec lua5.4 " .. q(script)
  if opts.nobody then
    run = "exec setpriv --reuid=65534 --regid=65534 --clear-groups lua5.4 " .. q(script)
  end
  local cmd = ("LUA_PATH=%s LUA_CPATH=%s sh -c %s 2>&1"):format(q(package.path), q(package.cpath),
    q(table.concat(pre, " ") .. run))
  local p = assert(io.popen(cmd))
  local out = p:read("a")
  local ok = p:close()
  os.remove(script)
  return ok == true, out
end

return M
