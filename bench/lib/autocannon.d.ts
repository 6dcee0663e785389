// Minimal typing of the parts of autocannon (no bundled types) that the benchmarks use.
declare module 'autocannon' {
  interface Request { method?: string; path: string; headers?: Record<string, string> }
  interface Options {
    url: string;
    connections?: number;
    duration?: number;
    amount?: number;
    headers?: Record<string, string>;
    requests?: Request[];
  }
  interface Histogram { average: number; mean: number; p50: number; p90: number; p99: number; max: number }
  interface Result {
    requests: Histogram & { total: number };
    latency: Histogram;
    throughput: Histogram;
    errors: number;
    timeouts: number;
    non2xx: number;
    '2xx': number;
    duration: number;
  }
  function autocannon(opts: Options): Promise<Result>;
  export default autocannon;
}
