-- Small helpers the specs share (spec/helpers/): temporary files and directories, reading a
-- file whole, and asserting an error whose message contains a plain text.
-- (busted puts its assert in each spec's environment, not in required modules)
local luassert = require "luassert"
local M = {}

-- A fresh path that does not exist yet.
function M.tmpname()
  local p = os.tmpname()
  os.remove(p)
  return p
end

-- A fresh directory, and a writer of named files inside it.
function M.tmpdir()
  local dir = M.tmpname()
  assert(os.execute("mkdir -p '" .. dir .. "'"))
  local function write(name, text)
    local path = dir .. "/" .. name
    local f = assert(io.open(path, "wb"))
    f:write(text)
    f:close()
    return path
  end
  return dir, write
end

-- The lines a shell command prints, as a list.
function M.lines_of(cmd)
  local out = {}
  local p = assert(io.popen(cmd))
  for line in p:lines() do out[#out + 1] = line end
  p:close()
  return out
end

function M.read_all(path)
  local f = assert(io.open(path, "rb"))
  local s = f:read("a")
  f:close()
  return s
end

-- Calls f(...) and asserts it raises an error containing pattern (plain text).
function M.raises(pattern, f, ...)
  local ok, err = pcall(f, ...)
  luassert.is_false(ok, "expected an error matching " .. pattern)
  luassert.is_truthy(tostring(err):find(pattern, 1, true), "message was: " .. tostring(err))
  return err
end

-- The message of the error f(...) raises (asserting that it raises).
function M.errmsg(f, ...)
  local ok, msg = pcall(f, ...)
  luassert.is_false(ok, "expected an error")
  return tostring(msg)
end

return M
