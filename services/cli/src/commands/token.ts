import { mkdirSync } from 'node:fs';
import { Role } from '@plumbline/contracts';
import { loadConfig } from '@plumbline/config';
import { createStore, openDatabase } from '@plumbline/store';
import { EXIT, parseFlags, UsageError, type Command } from '../args.ts';

const USAGE = `Usage:
  plumbline token create --role <robot|lead|integrator|admin> --name <name> [--robot <robot_id>]
  plumbline token list
  plumbline token revoke <token-id>

Works on the local data directory (PLUMBLINE_DATA_DIR), so it needs to run on the API host; it is how the first
admin token is made. Over HTTP, admins use POST/GET /api/v1/tokens and DELETE /api/v1/tokens/:id.
The plaintext token is printed once by "create"; only its hash is stored.
`;

export const tokenCommand: Command = {
  name: 'token',
  summary: 'create, list or revoke API tokens in the local data directory',
  usage: USAGE,
  async run(argv) {
    const [action, ...rest] = argv;
    const { values, positionals } = parseFlags(rest, { role: { type: 'string' }, name: { type: 'string' }, robot: { type: 'string' }, json: { type: 'boolean' } });
    const config = loadConfig();
    mkdirSync(config.dataDir, { recursive: true });
    const db = openDatabase(config.dbPath);
    try {
      const store = createStore(db);
      if (action === 'create') {
        const role = Role.safeParse(values.role);
        if (!role.success) throw new UsageError('--role must be one of robot, lead, integrator, admin');
        if (!values.name) throw new UsageError('--name is required');
        if ((role.data === 'robot') !== Boolean(values.robot)) throw new UsageError('--robot <robot_id> is required for robot tokens and only for them');
        const { token, info } = store.tokens.create({ role: role.data, name: values.name, ...(values.robot ? { robot_id: values.robot } : {}) });
        store.audit.append('cli', 'token.created', info.id, { role: info.role, name: info.name });
        process.stdout.write(values.json ? `${JSON.stringify({ token, info })}\n` : `${token}\n`);
        if (!values.json) process.stderr.write(`token ${info.id} (${info.role} "${info.name}") created; the line above is shown only once\n`);
        return EXIT.ok;
      }
      if (action === 'list') {
        const list = store.tokens.list();
        if (values.json) process.stdout.write(`${JSON.stringify(list)}\n`);
        else for (const t of list) process.stdout.write(`${t.id}\t${t.role}\t${t.name}\t${t.robot_id ?? '-'}\t${t.revoked_at ? `revoked ${t.revoked_at}` : 'active'}\n`);
        return EXIT.ok;
      }
      if (action === 'revoke') {
        const id = positionals[0];
        if (!id) throw new UsageError('revoke needs a token id (see "plumbline token list")');
        if (!store.tokens.revoke(id)) {
          process.stderr.write(`no active token ${id}\n`);
          return EXIT.input;
        }
        store.audit.append('cli', 'token.revoked', id);
        process.stderr.write(`token ${id} revoked\n`);
        return EXIT.ok;
      }
      throw new UsageError(action ? `unknown action "${action}"` : 'an action is required');
    } finally {
      db.close();
    }
  },
};
