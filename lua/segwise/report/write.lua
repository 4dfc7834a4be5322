--- segwise.report.write: output to a path or a file handle.  A path goes
-- through the C core's safe writer: a uniquely named temporary beside the
-- real target, renamed into place once complete, so an error never leaves
-- a truncated file; a symlink keeps pointing at its target, which gets the
-- text; an existing file keeps its mode; a FIFO or device (/dev/stdout) is
-- written directly; a file the process may not write is refused.
-- @module segwise.report.write

local core = require "segwise.core"

--- Writes string `s` to `out` (a path or anything with :write); returns s.
-- `fname` ("segwise.plot.svg") names the public function in errors.
local function write(out, s, fname)
  fname = fname or "segwise.report"
  if out == nil then return s end
  if type(out) == "string" then
    local ok, err = pcall(core.write_file, out, s, fname)
    if not ok then error(err, 3) end
    return s
  end
  local ok = pcall(function() assert(out:write(s)) end)
  if not ok then error(fname .. ": out must be a file path or an open file handle", 3) end
  return s
end

return write
