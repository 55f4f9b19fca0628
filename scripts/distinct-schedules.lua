-- wrk script: every request asks for a different 360-payment schedule, so no
-- answer is served from the answer store: each one is computed. wrk runs one Lua
-- state a thread; each thread takes its own residue modulo 8 of the principal's
-- cents (so two threads never ask for the same loan, up to 8 threads), and its
-- counter moves it 8 cents a request. A script argument N (`wrk ... URL -- N`)
-- starts the counter at N * 200000, so the runs of one server ask for different
-- loans too. Check with the server's residue_answer_cache_hits_total
-- (scripts/load.sh prints it for its run): it must not move.
threads = {}
function setup(thread)
  assert(#threads < 8, "at most 8 threads")
  thread:set("id", #threads)
  table.insert(threads, thread)
end
local counter = 0
function init(args)
  counter = (tonumber(args[1]) or 0) * 200000
end
request = function()
  counter = counter + 1
  local cents = 10000000 + counter * 8 + id
  local principal = string.format("%d.%02d", math.floor(cents / 100), cents % 100)
  return wrk.format("GET", "/api/v1/loans/schedule?principal=" .. principal .. "&annual_rate_percent=6&term_months=360")
end
