import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Role } from '@plumbline/contracts';
import type { Store } from '@plumbline/store';

interface SavedTokens {
  roles: Partial<Record<Role, string>>;
  robots: Record<string, string>;
}

export interface DemoTokens {
  roles: Record<Exclude<Role, 'robot'>, string>;
  /** The robot token of `robotId`, created on first use. */
  robotToken(robotId: string): string;
  robots(): Record<string, string>;
}

/**
 * Demo mode only: one token per role and one per robot, kept in `<dataDir>/demo-tokens.json` (mode 0600) so a
 * restarted demo can print them again. Outside demo mode tokens are shown once and never written to disk.
 */
export function ensureDemoTokens(store: Store, dataDir: string): DemoTokens {
  const file = join(dataDir, 'demo-tokens.json');
  const saved: SavedTokens = existsSync(file) ? (JSON.parse(readFileSync(file, 'utf8')) as SavedTokens) : { roles: {}, robots: {} };
  const valid = (t: string | undefined) => (t && store.tokens.verify(t) ? t : undefined);
  const state: SavedTokens = { roles: {}, robots: {} };
  const save = () => writeFileSync(file, `${JSON.stringify(state, null, 2)}\n`, { mode: 0o600 });
  const roles = {
    admin: valid(saved.roles.admin) ?? store.tokens.create({ role: 'admin', name: 'demo-admin' }).token,
    lead: valid(saved.roles.lead) ?? store.tokens.create({ role: 'lead', name: 'demo-lead' }).token,
    integrator: valid(saved.roles.integrator) ?? store.tokens.create({ role: 'integrator', name: 'demo-integrator' }).token,
  };
  state.roles = { ...roles };
  for (const [robot, t] of Object.entries(saved.robots)) if (valid(t)) state.robots[robot] = t;
  save();
  return {
    roles,
    robotToken(robotId) {
      let t = state.robots[robotId];
      if (!t) {
        t = store.tokens.create({ role: 'robot', name: robotId, robot_id: robotId }).token;
        state.robots[robotId] = t;
        save();
      }
      return t;
    },
    robots: () => ({ ...state.robots }),
  };
}
