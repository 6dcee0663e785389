/**
 * Prometheus text exposition format 0.0.4, written by hand: counters, gauges and histograms with labels.
 * Label values are escaped (backslash, double quote, newline) as the format requires.
 */
type Labels = Record<string, string>;

const escapeLabel = (v: string): string => v.replace(/\\/g, '\\\\').replace(/"/g, '\\"').replace(/\n/g, '\\n');
const labelKey = (l: Labels): string =>
  Object.keys(l)
    .sort()
    .map((k) => `${k}="${escapeLabel(l[k] ?? '')}"`)
    .join(',');
/**
 * The canonical key of label sets seen before, by their names and values in the caller's order: a repeated label set
 * (the same method, route and status on every request) skips the sort and the escaping. Bounded; a full cache is
 * emptied and refilled.
 */
class LabelKeys {
  private readonly keys = new Map<string, string>();
  of(l: Labels): string {
    let raw = '';
    // length-prefixed, so no choice of names and values makes two different label sets collide
    for (const name in l) {
      const v = l[name] ?? '';
      raw += `${name.length}:${name}${v.length}:${v}`;
    }
    let k = this.keys.get(raw);
    if (k === undefined) {
      if (this.keys.size >= 1024) this.keys.clear();
      k = labelKey(l);
      this.keys.set(raw, k);
    }
    return k;
  }
}
const fmt = (n: number): string => (n === Infinity ? '+Inf' : Number.isFinite(n) ? String(n) : 'NaN');

interface Metric {
  render(): string;
}

export class Counter implements Metric {
  private readonly values = new Map<string, number>();
  private readonly keys = new LabelKeys();
  constructor(
    readonly name: string,
    readonly help: string,
  ) {}
  inc(labels: Labels = {}, by = 1): void {
    const k = this.keys.of(labels);
    this.values.set(k, (this.values.get(k) ?? 0) + by);
  }
  render(): string {
    const lines = [`# HELP ${this.name} ${this.help}`, `# TYPE ${this.name} counter`];
    for (const [k, v] of this.values) lines.push(`${this.name}${k ? `{${k}}` : ''} ${fmt(v)}`);
    return lines.join('\n');
  }
}

/** A gauge read at scrape time from a callback (queue depth, runs by verdict). */
export class CallbackGauge implements Metric {
  constructor(
    readonly name: string,
    readonly help: string,
    private readonly read: () => Array<[Labels, number]>,
  ) {}
  render(): string {
    const lines = [`# HELP ${this.name} ${this.help}`, `# TYPE ${this.name} gauge`];
    for (const [l, v] of this.read()) {
      const k = labelKey(l);
      lines.push(`${this.name}${k ? `{${k}}` : ''} ${fmt(v)}`);
    }
    return lines.join('\n');
  }
}

export class Histogram implements Metric {
  private readonly series = new Map<string, { labels: Labels; counts: Float64Array; sum: number; count: number }>();
  private readonly keys = new LabelKeys();
  /** `buckets`: upper bounds, ascending, without +Inf. */
  constructor(
    readonly name: string,
    readonly help: string,
    readonly buckets: readonly number[],
  ) {}
  observe(labels: Labels, value: number): void {
    const k = this.keys.of(labels);
    let s = this.series.get(k);
    if (!s) {
      s = { labels, counts: new Float64Array(this.buckets.length), sum: 0, count: 0 };
      this.series.set(k, s);
    }
    for (let i = 0; i < this.buckets.length; i++) if (value <= (this.buckets[i] as number)) s.counts[i] = (s.counts[i] as number) + 1;
    s.sum += value;
    s.count += 1;
  }
  render(): string {
    const lines = [`# HELP ${this.name} ${this.help}`, `# TYPE ${this.name} histogram`];
    for (const s of this.series.values()) {
      const base = labelKey(s.labels);
      const withLe = (le: string) => `{${base ? `${base},` : ''}le="${le}"}`;
      this.buckets.forEach((b, i) => lines.push(`${this.name}_bucket${withLe(fmt(b))} ${s.counts[i]}`));
      lines.push(`${this.name}_bucket${withLe('+Inf')} ${s.count}`);
      lines.push(`${this.name}_sum${base ? `{${base}}` : ''} ${fmt(s.sum)}`);
      lines.push(`${this.name}_count${base ? `{${base}}` : ''} ${s.count}`);
    }
    return lines.join('\n');
  }
}

export class MetricsRegistry {
  private readonly metrics: Metric[] = [];
  private readonly asyncGauges: Array<() => Promise<CallbackGauge[]>> = [];
  register<M extends Metric>(m: M): M {
    this.metrics.push(m);
    return m;
  }
  /** Gauges whose values need an async read (the queue counts), made at scrape time. */
  registerAsync(make: () => Promise<CallbackGauge[]>): void {
    this.asyncGauges.push(make);
  }
  async render(): Promise<string> {
    const extra = (await Promise.all(this.asyncGauges.map((f) => f()))).flat();
    return `${[...this.metrics, ...extra].map((m) => m.render()).join('\n')}\n`;
  }
}

/** The metrics the service exposes. `jobDuration` is fed by the in-process worker in embedded mode. */
export interface ServiceMetrics {
  registry: MetricsRegistry;
  httpDuration: Histogram;
  uploadBytes: Counter;
  jobDuration: Histogram;
}

export function createServiceMetrics(): ServiceMetrics {
  const registry = new MetricsRegistry();
  return {
    registry,
    httpDuration: registry.register(
      new Histogram('plumbline_http_request_duration_seconds', 'HTTP request durations by method, route and status', [
        0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30,
      ]),
    ),
    uploadBytes: registry.register(new Counter('plumbline_upload_bytes_total', 'Bundle bytes received (whole uploads and chunks)')),
    jobDuration: registry.register(
      new Histogram('plumbline_job_duration_seconds', 'Analysis job durations by outcome', [0.1, 0.5, 1, 2, 5, 10, 30, 60, 120, 300, 600]),
    ),
  };
}
