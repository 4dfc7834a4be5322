--- segwise.report.write: output to a path or a file handle.  A path is
-- written to "<path>.tmp" then renamed, so an error never leaves a
-- truncated file.
-- @module segwise.report.write

local M = {}

-- Writing output: a path is written to "<path>.tmp" then renamed, so an error
-- never leaves a truncated file; a handle is written as is.

--- Writes string `s` to `out` (a path or anything with :write).
function M.write(out, s, fname)
  fname = fname or "segwise.report"
  if out == nil then return s end
  if type(out) == "string" then
    local tmp = out .. ".tmp"
    local f, err = io.open(tmp, "wb")
    if not f then error(fname .. ": cannot write '" .. out .. "': " .. tostring(err), 3) end
    local ok, werr = f:write(s)
    local cok, cerr = f:close()
    if not ok or not cok then
      os.remove(tmp)
      error(fname .. ": cannot write '" .. out .. "': " .. tostring(werr or cerr), 3)
    end
    local rok, rerr = os.rename(tmp, out)
    if not rok then
      os.remove(tmp)
      error(fname .. ": cannot rename '" .. tmp .. "' to '" .. out .. "': " .. tostring(rerr), 3)
    end
    return s
  end
  local ok = pcall(function() assert(out:write(s)) end)
  if not ok then error(fname .. ": out must be a file path or an open file handle", 3) end
  return s
end

return M.write
