import { describe, expect, it } from 'vitest';
import { resolveConfig } from '../../src/config/load.ts';
import type { ConfigInput } from '../../src/config/schema.ts';
import { holdsWholeDay } from '../../src/watch/inboxFiles.ts';
import { MINIMAL_CONFIG } from '../helpers/workspace.ts';

const configWith = (overrides: Partial<ConfigInput> = {}) => resolveConfig({ ...MINIMAL_CONFIG, ...overrides }, '/work/pipeline.config.json');

describe('holdsWholeDay', () => {
  it('is true once a file of every kind in schedule.missingData.expect is in (default: prices and positions), by the sources\' patterns', () => {
    const config = configWith();
    expect(holdsWholeDay(config, ['/in/prices_20261201.csv'])).toBe(false);
    expect(holdsWholeDay(config, ['/in/prices_20261201.csv', '/in/fx_20261201.csv'])).toBe(false);
    expect(holdsWholeDay(config, ['/in/Positions_20261201.CSV', '/in/prices_20261201.csv.gz'])).toBe(true);
  });

  it('follows the expected kinds and a custom source\'s pattern', () => {
    const config = configWith({
      schedule: { missingData: { expect: ['prices', 'positions', 'fx'] } },
      sources: [{ name: 'bank rates', pattern: 'rates-*.txt', kind: 'fx' }],
    });
    expect(holdsWholeDay(config, ['/in/prices_1.csv', '/in/positions_1.csv'])).toBe(false);
    expect(holdsWholeDay(config, ['/in/prices_1.csv', '/in/positions_1.csv', '/in/rates-1.txt'])).toBe(true);
  });

  it('is never true when no kind is expected: every batch then waits out watch.settleMs', () => {
    const config = configWith({ schedule: { missingData: { expect: [] } } });
    expect(holdsWholeDay(config, ['/in/prices_1.csv', '/in/positions_1.csv', '/in/fx_1.csv'])).toBe(false);
  });
});
