-- wrk script: every request asks for a different 360-payment schedule, so no
-- answer is served from the answer store: each one is computed. wrk runs one Lua
-- state a thread; each thread takes its own residue modulo 64 of the principal's
-- cents (so two threads never ask for the same loan), and its counter moves it
-- 64 cents a request. Check with the server's residue_answer_cache_hits_total
-- (scripts/load.sh prints it for its run): it must not move.
threads = {}
function setup(thread)
  thread:set("id", #threads)
  table.insert(threads, thread)
end
local counter = 0
request = function()
  counter = counter + 1
  local cents = 10000000 + counter * 64 + id
  local principal = string.format("%d.%02d", math.floor(cents / 100), cents % 100)
  return wrk.format("GET", "/api/v1/loans/schedule?principal=" .. principal .. "&annual_rate_percent=6&term_months=360")
end
