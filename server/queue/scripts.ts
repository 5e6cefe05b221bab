/**
 * The run queue's state in Redis and the Lua scripts that change it. Redis runs each script atomically (EVAL, "Redis
 * programmability" in the Redis documentation), so every server and worker sees the queue move from one consistent
 * state to the next. Keys, under a prefix (default `subtherm:`):
 *   ring           list of clients that have queued runs, in round-robin order (a client is in it iff its queue is
 *                  not empty)
 *   q:<client>     list of the client's queued run ids, oldest first
 *   run:<id>       hash of a queued or running run: client, work, tokenHash, projectId, payload (request and data
 *                  sets as JSON), cacheKey, attempts, status, worker, progress, message, cancel, reason
 *   ck:<cacheKey>  id of the live run with that cache key (so the same request is not queued twice)
 *   leases         sorted set: run id → the ms time its worker's lease ends (renewed while the worker lives)
 *   live           set of the ids of queued and running runs
 *   ending         set of runs the reaper failed whose end is not yet in the Store
 *   inflight, work hashes client → runs and cells × realizations in flight; field `*` holds the totals
 *   workers        sorted set: worker id → last heartbeat (ms); worker:<id> its run slots
 *   events         pub/sub channel of run snapshots (JSON); cancel: pub/sub channel of run ids to stop
 * Every script takes the prefix as its first argument and builds its keys from it, so one Redis database serves one
 * queue (a single Redis server, not Redis Cluster).
 */

/**
 * Reserves a run's place in the per-client and total bounds and records it (status `reserved`, not yet startable);
 * or names the bound it would pass, or the live run with the same cache key.
 * ARGV: prefix, id, client, work, maxPerClient, maxWorkPerClient, maxServer, maxWorkServer (−1: unbounded), cacheKey,
 * tokenHash, projectId, payload. Returns {'ok'} | {'twin', id} | {limitName, value}.
 */
export const RESERVE = `
local p, id, client, work = ARGV[1], ARGV[2], ARGV[3], tonumber(ARGV[4])
local maxC, maxWC, maxS, maxWS = tonumber(ARGV[5]), tonumber(ARGV[6]), tonumber(ARGV[7]), tonumber(ARGV[8])
local twin = redis.call('GET', p .. 'ck:' .. ARGV[9])
if twin and redis.call('EXISTS', p .. 'run:' .. twin) == 1 then return {'twin', twin} end
local n = tonumber(redis.call('HGET', p .. 'inflight', client) or '0')
if maxC >= 0 and n >= maxC then return {'maxQueuedRunsPerClient', tostring(n)} end
local w = tonumber(redis.call('HGET', p .. 'work', client) or '0')
if maxWC >= 0 and w + work > maxWC then return {'maxQueuedWorkPerClient', tostring(w + work)} end
local total = tonumber(redis.call('HGET', p .. 'inflight', '*') or '0')
if maxS >= 0 and total >= maxS then return {'maxQueuedRunsServer', tostring(total)} end
local tw = tonumber(redis.call('HGET', p .. 'work', '*') or '0')
if maxWS >= 0 and tw + work > maxWS then return {'maxQueuedWorkServer', tostring(tw + work)} end
redis.call('HINCRBY', p .. 'inflight', client, 1)
redis.call('HINCRBY', p .. 'inflight', '*', 1)
redis.call('HINCRBYFLOAT', p .. 'work', client, work)
redis.call('HINCRBYFLOAT', p .. 'work', '*', work)
redis.call('HSET', p .. 'run:' .. id, 'client', client, 'work', ARGV[4], 'cacheKey', ARGV[9], 'tokenHash', ARGV[10],
  'projectId', ARGV[11], 'payload', ARGV[12], 'attempts', 0, 'status', 'reserved', 'progress', 0, 'message', 'queued')
redis.call('SET', p .. 'ck:' .. ARGV[9], id)
return {'ok'}`;

/** Makes a reserved run startable: the tail of its client's queue (the client joins the ring). ARGV: prefix, id. */
export const ENQUEUE = `
local p, id = ARGV[1], ARGV[2]
local client = redis.call('HGET', p .. 'run:' .. id, 'client')
if not client then return 0 end
redis.call('HSET', p .. 'run:' .. id, 'status', 'queued')
redis.call('SADD', p .. 'live', id)
if redis.call('RPUSH', p .. 'q:' .. client, id) == 1 then redis.call('RPUSH', p .. 'ring', client) end
return 1`;

/**
 * Takes the next run in round-robin order across clients: the client at the head of the ring gives its oldest run
 * and goes to the back of the ring (if it has more). The run gets a lease until `now + leaseMs` and one more attempt.
 * ARGV: prefix, workerId, now (ms), leaseMs. Returns {id, attempts, payload} or nil.
 */
export const CLAIM = `
local p, worker, now, lease = ARGV[1], ARGV[2], tonumber(ARGV[3]), tonumber(ARGV[4])
for _ = 1, 1000 do
  local client = redis.call('LPOP', p .. 'ring')
  if not client then return nil end
  local id = redis.call('LPOP', p .. 'q:' .. client)
  if redis.call('LLEN', p .. 'q:' .. client) > 0 then redis.call('RPUSH', p .. 'ring', client) end
  if id and redis.call('HGET', p .. 'run:' .. id, 'status') == 'queued' then
    local attempts = redis.call('HINCRBY', p .. 'run:' .. id, 'attempts', 1)
    redis.call('HSET', p .. 'run:' .. id, 'status', 'running', 'worker', worker, 'message', 'starting')
    redis.call('ZADD', p .. 'leases', now + lease, id)
    return {id, tostring(attempts), redis.call('HGET', p .. 'run:' .. id, 'payload')}
  end
end
return nil`;

/**
 * Extends the leases of the runs a worker holds and records its heartbeat. ARGV: prefix, workerId, now, leaseMs,
 * slots, ids… Returns a flat list {id, 'lost'|'cancel', …} of the runs the worker must stop: no longer its own (the
 * lease ran out and the run was handed on), or asked to be cancelled.
 */
export const RENEW = `
local p, worker, now, lease = ARGV[1], ARGV[2], tonumber(ARGV[3]), tonumber(ARGV[4])
redis.call('ZADD', p .. 'workers', now, worker)
redis.call('SET', p .. 'worker:' .. worker, ARGV[5], 'PX', 60000)
local stop = {}
for i = 6, #ARGV do
  local id = ARGV[i]
  local h = redis.call('HMGET', p .. 'run:' .. id, 'worker', 'status', 'cancel')
  if h[1] ~= worker or h[2] ~= 'running' then
    table.insert(stop, id); table.insert(stop, 'lost')
  elseif h[3] == '1' then
    table.insert(stop, id); table.insert(stop, 'cancel')
  else
    redis.call('ZADD', p .. 'leases', 'XX', now + lease, id)
  end
end
return stop`;

/**
 * Hands on the runs whose lease ran out (their worker died or stalled): back to the head of their client's queue
 * while they have attempts left, else marked failed with the reason and listed in `ending` for the Store write.
 * ARGV: prefix, now, maxAttempts, reason. Returns a flat list {id, 'retry'|'failed', attempts, …}.
 */
export const REAP = `
local p, now, maxA = ARGV[1], tonumber(ARGV[2]), tonumber(ARGV[3])
local out = {}
for _, id in ipairs(redis.call('ZRANGEBYSCORE', p .. 'leases', '-inf', now)) do
  redis.call('ZREM', p .. 'leases', id)
  local key = p .. 'run:' .. id
  local h = redis.call('HMGET', key, 'client', 'attempts', 'cancel')
  if h[1] then
    local attempts = tonumber(h[2] or '0')
    if attempts < maxA and h[3] ~= '1' then
      redis.call('HSET', key, 'status', 'queued', 'worker', '')
      if redis.call('LPUSH', p .. 'q:' .. h[1], id) == 1 then redis.call('LPUSH', p .. 'ring', h[1]) end
      table.insert(out, id); table.insert(out, 'retry'); table.insert(out, tostring(attempts))
    else
      local status = (h[3] == '1') and 'cancelled' or 'failed'
      redis.call('HSET', key, 'status', status, 'reason', ARGV[4])
      redis.call('SADD', p .. 'ending', id)
      table.insert(out, id); table.insert(out, status); table.insert(out, tostring(attempts))
    end
  end
end
return out`;

/**
 * Cancels a run: a queued one leaves its queue at once (returns 'queued'); a running one is flagged and its worker
 * told on the cancel channel (returns 'running'); nil when the run is not live. ARGV: prefix, id.
 */
export const CANCEL = `
local p, id = ARGV[1], ARGV[2]
local key = p .. 'run:' .. id
local h = redis.call('HMGET', key, 'status', 'client')
if h[1] == 'queued' then
  redis.call('LREM', p .. 'q:' .. h[2], 0, id)
  if redis.call('LLEN', p .. 'q:' .. h[2]) == 0 then redis.call('LREM', p .. 'ring', 0, h[2]) end
  redis.call('HSET', key, 'status', 'cancelled')
  return 'queued'
end
if h[1] == 'running' then
  redis.call('HSET', key, 'cancel', '1')
  redis.call('PUBLISH', p .. 'cancel', id)
  return 'running'
end
return nil`;

/**
 * Forgets an ended run and gives back its share of the bounds; with a worker id, only if that worker still holds it
 * (a worker whose lease ran out must not end the run another worker now runs). ARGV: prefix, id, workerId ('' any).
 * Returns 1 when the run was forgotten.
 */
export const FINISH = `
local p, id, worker = ARGV[1], ARGV[2], ARGV[3]
local key = p .. 'run:' .. id
local h = redis.call('HMGET', key, 'client', 'work', 'worker', 'cacheKey')
if not h[1] then return 0 end
if worker ~= '' and h[3] ~= worker then return 0 end
for _, field in ipairs({h[1], '*'}) do
  if redis.call('HINCRBY', p .. 'inflight', field, -1) <= 0 then redis.call('HDEL', p .. 'inflight', field) end
  if tonumber(redis.call('HINCRBYFLOAT', p .. 'work', field, -tonumber(h[2]))) <= 0 then redis.call('HDEL', p .. 'work', field) end
end
if redis.call('GET', p .. 'ck:' .. h[4]) == id then redis.call('DEL', p .. 'ck:' .. h[4]) end
redis.call('DEL', key)
redis.call('ZREM', p .. 'leases', id)
redis.call('SREM', p .. 'live', id)
redis.call('SREM', p .. 'ending', id)
return 1`;
