-- Runs busted and ends with one line "N passed, N failed" from busted's own
-- counts.  Usage: lua5.4 spec/run.lua LUA BUSTED [busted args...]
local lua, busted = arg[1], arg[2]
local rest = {}
-- LUA may be a command with arguments (valgrind ...); the rest are quoted.
for i = 3, #arg do rest[#rest + 1] = "'" .. arg[i]:gsub("'", "'\\''") .. "'" end
local cmd = string.format("%s %s -o plainTerminal %s 2>&1", lua, busted, table.concat(rest, " "))
local pipe = assert(io.popen(cmd))
local ok_n, fail_n, err_n
for line in pipe:lines() do
  print(line)
  local s, f, e = line:match("(%d+) successe?s? / (%d+) failures? / (%d+) errors?")
  if s then ok_n, fail_n, err_n = tonumber(s), tonumber(f), tonumber(e) end
end
local closed_ok, _, code = pipe:close()
if not ok_n then
  print("0 passed, 1 failed")
  io.stderr:write("spec/run.lua: busted printed no summary (did it crash?)\n")
  os.exit(1)
end
if not closed_ok and fail_n + err_n == 0 then
  io.stderr:write(("spec/run.lua: the run exited with status %s although every spec passed "
    .. "(a sanitizer or valgrind report above?)\n"):format(tostring(code)))
end
print(string.format("%d passed, %d failed", ok_n, fail_n + err_n))
os.exit((fail_n + err_n == 0 and closed_ok) and 0 or 1)
