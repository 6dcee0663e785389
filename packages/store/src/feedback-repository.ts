import type { FlagDisposition, FlagKind, FlagReview, ReviewedFlag, Verdict } from '@plumbline/contracts';
import type { FeedbackRepository } from './fleet-types.ts';
import type { Db } from './types.ts';


/** Review statistics and re-analysis outcomes, read across runs (no writes). */
export function createFeedbackRepository(db: Db): FeedbackRepository {
  const latestReviews = db.prepare(
    `SELECT rv.run, rv.flags_json, r.site FROM reviews rv JOIN runs r ON r.id = rv.run
     WHERE rv.id = (SELECT max(id) FROM reviews WHERE run = rv.run) AND (? IS NULL OR r.site = ?)`,
  );
  const flagsOf = db.prepare('SELECT flag_id, kind, value FROM flags WHERE run = ?');
  const changes = db.prepare(
    `SELECT r.id AS run, r.robot_id, r.run_id,
            cur.verdict AS after_verdict, cur.score AS after_score, cur.policy_hash AS after_hash,
            prev.verdict AS before_verdict, prev.score AS before_score, prev.policy_hash AS before_hash
     FROM runs r
     JOIN reports cur ON cur.run = r.id AND cur.is_current = 1
     JOIN reports prev ON prev.id = (SELECT max(id) FROM reports WHERE run = r.id AND id < cur.id)
     WHERE cur.verdict <> prev.verdict AND (? IS NULL OR r.policy IN (SELECT value FROM json_each(?)))
     ORDER BY cur.id DESC LIMIT ?`,
  );

  return {
    reviewedFlags(opts = {}) {
      const site = opts.site ?? null;
      const out: ReviewedFlag[] = [];
      for (const rv of latestReviews.all(site, site) as { run: string; flags_json: string; site: string }[]) {
        const dispositions = JSON.parse(rv.flags_json) as FlagReview[];
        if (dispositions.length === 0) continue;
        const flags = new Map((flagsOf.all(rv.run) as { flag_id: string; kind: FlagKind; value: number | null }[]).map((f) => [f.flag_id, f]));
        for (const d of dispositions) {
          const f = flags.get(d.flag_id);
          if (f) out.push({ kind: f.kind, site: rv.site, value: f.value, disposition: d.disposition as FlagDisposition });
        }
      }
      return out;
    },
    verdictChanges(opts = {}) {
      const names = opts.policies ? JSON.stringify(opts.policies) : null;
      type Row = { run: string; robot_id: string; run_id: string; after_verdict: Verdict; after_score: number; after_hash: string; before_verdict: Verdict; before_score: number; before_hash: string };
      return (changes.all(names, names, opts.limit ?? 500) as Row[]).map((r) => ({
        run: r.run,
        robot_id: r.robot_id,
        run_id: r.run_id,
        before: { verdict: r.before_verdict, score: r.before_score, policy_hash: r.before_hash },
        after: { verdict: r.after_verdict, score: r.after_score, policy_hash: r.after_hash },
      }));
    },
  };
}
