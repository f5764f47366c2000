import { describe, expect, it } from 'vitest';
import { SettingsError, defaultSettings, resolveSettings } from '../../src/agent/settings.ts';

describe('resolveSettings', () => {
  it('fills defaults and keeps what is given', () => {
    const s = resolveSettings({ gamma: 0.9, hiddenLayers: [8], rule: 'dqn' });
    expect(s.gamma).toBe(0.9);
    expect(s.hiddenLayers).toEqual([8]);
    expect(s.rule).toBe('dqn');
    expect(s.batchSize).toBe(defaultSettings.batchSize);
    expect(resolveSettings()).toEqual({ ...defaultSettings, hiddenLayers: [...defaultSettings.hiddenLayers] });
  });

  it('does not let a caller change the defaults through the result', () => {
    const s = resolveSettings();
    s.hiddenLayers.push(3);
    expect(defaultSettings.hiddenLayers).toEqual([64, 64]);
  });

  it.each([
    [{ gamma: 1 }, /gamma = 1: expected a finite number ≥ 0 and < 1/],
    [{ gamma: Number.NaN }, /gamma = NaN/],
    [{ batchSize: 0 }, /batchSize = 0: expected an integer ≥ 1/],
    [{ batchSize: 32.5 }, /batchSize = 32.5/],
    [{ replayStart: 10, batchSize: 32 }, /replayStart = 10: expected at least batchSize \(32\)/],
    [{ replayCapacity: 16, batchSize: 32, replayStart: 32 }, /replayCapacity = 16/],
    [{ rule: 'triple' as never }, /rule = "triple": expected one of 'dqn', 'double'/],
    [{ activation: 'gelu' as never }, /activation = "gelu"/],
    [{ hiddenLayers: [64, 0] }, /hiddenLayers\[1\] = 0/],
    [{ epsilonEnd: 1.5 }, /epsilonEnd = 1.5: expected a finite number ≥ 0 and ≤ 1/],
    [{ learningRate: 0 }, /learningRate = 0: expected a finite number > 0/],
    [{ gradientClipNorm: -1 }, /gradientClipNorm = -1/],
    [{ seed: -3 }, /seed = -3: expected an integer in \[0, 4294967295\]/],
    [{ snapshotEverySyncs: 0 }, /snapshotEverySyncs = 0/],
    [{ gama: 0.9 } as never, /unknown setting "gama"/],
  ])('rejects %o naming the field, the value and what was expected', (partial, message) => {
    expect(() => resolveSettings(partial)).toThrow(SettingsError);
    expect(() => resolveSettings(partial)).toThrow(message);
  });

  it('accepts no gradient clipping', () => {
    expect(resolveSettings({ gradientClipNorm: null }).gradientClipNorm).toBeNull();
  });
});
