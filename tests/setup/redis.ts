// The test suite uses the same private redis-server starter as the compare benchmark.
export { startRedis, freePort, type RedisHandle } from "../../src/batch/redis-server.js";
