import {
  AuditEntry,
  Problem,
  Review,
  RobotSummary,
  RunDetail,
  RunListPage,
  type ReviewInput,
} from '@plumbline/contracts';

const TOKEN_KEY = 'plumbline.token';

/** Who the token belongs to (`GET /api/v1/me`). */
export interface Me {
  role: string;
  name: string;
  robot_id: string | null;
}

/** The part of a zod schema this client uses; keeps the dashboard free of a direct zod dependency. */
interface Parser<T> {
  safeParse(v: unknown): { success: true; data: T } | { success: false; error: { issues: { path: PropertyKey[]; message: string }[] } };
}

const MeParser: Parser<Me> = {
  safeParse(v) {
    const o = v as Partial<Me> | null;
    if (o && typeof o.role === 'string' && typeof o.name === 'string') {
      return { success: true, data: { role: o.role, name: o.name, robot_id: typeof o.robot_id === 'string' ? o.robot_id : null } };
    }
    return { success: false, error: { issues: [{ path: [], message: 'expected { role, name }' }] } };
  },
};

/** Error carrying an RFC 9457 problem from the API, or a network/shape failure described in `detail`. */
export class ApiError extends Error {
  readonly status: number;
  readonly problem: Problem | null;
  constructor(status: number, message: string, problem: Problem | null) {
    super(message);
    this.name = 'ApiError';
    this.status = status;
    this.problem = problem;
  }
}

export function loadToken(): string | null {
  try {
    return localStorage.getItem(TOKEN_KEY);
  } catch {
    return null;
  }
}

export function saveToken(token: string | null): void {
  if (token === null) localStorage.removeItem(TOKEN_KEY);
  else localStorage.setItem(TOKEN_KEY, token);
}

/** Query filters the queue page may send; keys follow RunListQuery in the contracts. */
export type RunFilter = Partial<Record<'robot_id' | 'site' | 'verdict' | 'flag_kind' | 'reviewed' | 'started_after' | 'started_before' | 'sort' | 'limit' | 'cursor' | 'status', string>>;

export interface ApiClient {
  me(): Promise<Me>;
  listRuns(filter: RunFilter): Promise<RunListPage>;
  run(id: string): Promise<RunDetail>;
  audit(id: string): Promise<AuditEntry[]>;
  postReview(id: string, input: ReviewInput): Promise<Review>;
  robots(): Promise<RobotSummary[]>;
  /** `GET /runs/:id/trajectory.csv` as a Blob (needs the bearer header, so a plain link cannot fetch it). */
  trajectoryCsv(id: string, variant: 'repaired' | 'original'): Promise<Blob>;
}

/**
 * Fetch wrapper for `/api/v1`: sends the bearer token, turns problem+json into ApiError and checks every
 * response against its contract schema so a drifted API shows up as a clear message instead of a blank page.
 */
export function createApiClient(getToken: () => string | null, base = '/api/v1'): ApiClient {
  async function call<T>(schema: Parser<T>, path: string, init: RequestInit = {}): Promise<T> {
    const headers = new Headers(init.headers);
    const token = getToken();
    if (token) headers.set('Authorization', `Bearer ${token}`);
    headers.set('Accept', 'application/json, application/problem+json');
    const res = await fetch(base + path, { ...init, headers });
    const text = await res.text();
    let body: unknown = null;
    try {
      body = text ? JSON.parse(text) : null;
    } catch {
      throw new ApiError(res.status, `${path}: response is not JSON (HTTP ${res.status})`, null);
    }
    if (!res.ok) {
      const parsed = Problem.safeParse(body);
      const problem = parsed.success ? parsed.data : null;
      const msg = problem ? `${problem.title}${problem.detail ? `: ${problem.detail}` : ''}` : `HTTP ${res.status}`;
      throw new ApiError(res.status, msg, problem);
    }
    const parsed = schema.safeParse(body);
    if (!parsed.success) {
      const issue = parsed.error.issues[0];
      const where = issue ? `${issue.path.map(String).join('.')}: ${issue.message}` : 'unknown';
      throw new ApiError(res.status, `${path}: response does not match the contract (${where})`, null);
    }
    return parsed.data;
  }

  const enc = encodeURIComponent;
  return {
    me: () => call(MeParser, '/me'),
    listRuns(filter) {
      const qs = new URLSearchParams();
      for (const [k, v] of Object.entries(filter)) if (v) qs.set(k, v);
      return call(RunListPage, `/runs?${qs.toString()}`);
    },
    run: (id) => call(RunDetail, `/runs/${enc(id)}`),
    audit: (id) => call(AuditEntry.array(), `/runs/${enc(id)}/audit`),
    postReview: (id, input) =>
      call(Review, `/runs/${enc(id)}/reviews`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json' },
        body: JSON.stringify(input),
      }),
    robots: () => call(RobotSummary.array(), '/robots'),
    async trajectoryCsv(id, variant) {
      const token = getToken();
      const res = await fetch(`${base}/runs/${enc(id)}/trajectory.csv?variant=${variant}`, { headers: token ? { Authorization: `Bearer ${token}` } : {} });
      if (!res.ok) {
        const parsed = Problem.safeParse(await res.json().catch(() => null));
        throw new ApiError(res.status, parsed.success ? parsed.data.title : `HTTP ${res.status}`, parsed.success ? parsed.data : null);
      }
      return res.blob();
    },
  };
}
