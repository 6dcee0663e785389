import { describe, expect, it } from 'vitest';
import { safeJoin } from './static.ts';

describe('safeJoin', () => {
  const root = '/srv/dist/assets';
  it('keeps paths inside the root', () => {
    expect(safeJoin(root, 'app.js')).toBe('/srv/dist/assets/app.js');
    expect(safeJoin(root, 'css/site.css')).toBe('/srv/dist/assets/css/site.css');
  });
  it('refuses traversal, encoded traversal, NUL and backslashes', () => {
    expect(safeJoin(root, '../index.html')).toBeNull();
    expect(safeJoin(root, '%2e%2e/%2e%2e/etc/passwd')).toBeNull();
    expect(safeJoin(root, 'a/../../b')).toBeNull();
    expect(safeJoin(root, 'a%00.js')).toBeNull();
    expect(safeJoin(root, '..\\x')).toBeNull();
    expect(safeJoin(root, '%E0%A4%A')).toBeNull();
  });
});
