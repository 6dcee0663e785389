import { describe, expect, it } from 'vitest';
import { CallbackGauge, Counter, Histogram, MetricsRegistry } from './metrics.ts';

// Expected text follows the Prometheus text exposition format 0.0.4 (prometheus.io "Exposition formats"):
// cumulative `_bucket` lines with an `le` label ending in +Inf, then `_sum` and `_count`.
describe('histogram rendering', () => {
  it('writes cumulative buckets, sum and count', () => {
    const h = new Histogram('x_seconds', 'test', [0.1, 1]);
    h.observe({ route: '/a' }, 0.05);
    h.observe({ route: '/a' }, 0.5);
    h.observe({ route: '/a' }, 3);
    expect(h.render()).toBe(
      [
        '# HELP x_seconds test',
        '# TYPE x_seconds histogram',
        'x_seconds_bucket{route="/a",le="0.1"} 1',
        'x_seconds_bucket{route="/a",le="1"} 2',
        'x_seconds_bucket{route="/a",le="+Inf"} 3',
        'x_seconds_sum{route="/a"} 3.55',
        'x_seconds_count{route="/a"} 3',
      ].join('\n'),
    );
  });
});

describe('counter and gauge rendering', () => {
  it('escapes label values and sums increments', async () => {
    const r = new MetricsRegistry();
    const c = r.register(new Counter('c_total', 'a counter'));
    c.inc({ v: 'a"b\\c\nd' }, 2);
    c.inc({ v: 'a"b\\c\nd' });
    r.register(new CallbackGauge('g', 'a gauge', () => [[{ verdict: 'sound' }, 4]]));
    const text = await r.render();
    expect(text).toContain('c_total{v="a\\"b\\\\c\\nd"} 3');
    expect(text).toContain('# TYPE g gauge\ng{verdict="sound"} 4');
    expect(text.endsWith('\n')).toBe(true);
  });
});
