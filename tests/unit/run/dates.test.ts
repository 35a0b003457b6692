/**
 * Snapshot-date arithmetic: `YYYY-MM-DD` strings, days counted in UTC, calendar dates of an
 * instant in a time zone, and the baseline windows. Expected dates are from the Gregorian
 * calendar (leap years: divisible by 4, except centuries not divisible by 400).
 */
import { describe, expect, it } from 'vitest';
import { addDays, baselineDates, dateInZone, dateRange, isIsoDate } from '../../../src/run/index.ts';

describe('isIsoDate', () => {
  it('accepts real calendar dates written YYYY-MM-DD', () => {
    for (const d of ['2025-01-01', '2024-02-29', '2000-02-29', '2025-12-31', '1999-06-15']) expect(isIsoDate(d), d).toBe(true);
  });

  it('rejects dates that do not exist and other spellings', () => {
    for (const d of ['2025-02-30', '2025-02-29', '1900-02-29', '2025-04-31', '2025-13-01', '2025-00-10', '2025-01-00', '2025-1-01', '20250101', ' 2025-01-01', '2025-01-01T00:00:00Z', '']) {
      expect(isIsoDate(d), JSON.stringify(d)).toBe(false);
    }
  });
});

describe('addDays', () => {
  it('crosses month and year ends', () => {
    expect(addDays('2025-01-31', 1)).toBe('2025-02-01');
    expect(addDays('2025-04-30', 1)).toBe('2025-05-01');
    expect(addDays('2025-12-31', 1)).toBe('2026-01-01');
    expect(addDays('2026-01-01', -1)).toBe('2025-12-31');
    expect(addDays('2025-03-01', -1)).toBe('2025-02-28');
    expect(addDays('2025-01-01', 365)).toBe('2026-01-01');
    expect(addDays('2025-06-15', 0)).toBe('2025-06-15');
  });

  it('knows leap years, including the century rule', () => {
    expect(addDays('2024-02-28', 1)).toBe('2024-02-29');
    expect(addDays('2024-02-29', 1)).toBe('2024-03-01');
    expect(addDays('2024-03-01', -1)).toBe('2024-02-29');
    expect(addDays('2025-02-28', 1)).toBe('2025-03-01');
    expect(addDays('2000-02-28', 1)).toBe('2000-02-29'); // divisible by 400: leap
    expect(addDays('2100-02-28', 1)).toBe('2100-03-01'); // century not divisible by 400: not leap
    expect(addDays('2024-01-01', 366)).toBe('2025-01-01');
  });

  it('is not moved by daylight-saving changes (arithmetic in UTC)', () => {
    expect(addDays('2025-03-29', 1)).toBe('2025-03-30'); // Europe switches to summer time on 30 March 2025
    expect(addDays('2025-03-30', 1)).toBe('2025-03-31');
    expect(addDays('2025-10-26', 1)).toBe('2025-10-27');
  });

  // Regression: Date.parse rolls 2025-02-30 over to 2 March, so the wrong day came back silently.
  it('throws on a date that does not exist and on a fraction of a day', () => {
    expect(() => addDays('2025-02-30', 1)).toThrow(new RangeError('addDays requires a date written YYYY-MM-DD; got "2025-02-30"'));
    expect(() => addDays('yesterday', 1)).toThrow(RangeError);
    expect(() => addDays('2025-01-01', 0.5)).toThrow(new RangeError('addDays requires a whole number of days; got 0.5'));
    expect(() => addDays('2025-01-01', Number.NaN)).toThrow(RangeError);
  });
});

describe('dateRange', () => {
  it('lists every date from one to the other, both included', () => {
    expect(dateRange('2024-02-27', '2024-03-02')).toEqual(['2024-02-27', '2024-02-28', '2024-02-29', '2024-03-01', '2024-03-02']);
    expect(dateRange('2025-12-30', '2026-01-02')).toEqual(['2025-12-30', '2025-12-31', '2026-01-01', '2026-01-02']);
    expect(dateRange('2025-05-05', '2025-05-05')).toEqual(['2025-05-05']);
    expect(dateRange('2025-05-06', '2025-05-05')).toEqual([]);
    expect(dateRange('2025-01-01', '2025-12-31')).toHaveLength(365);
  });
});

describe('baselineDates', () => {
  it('trailing: the N days before the run date, oldest first', () => {
    expect(baselineDates({ type: 'trailing', days: 3 }, '2025-03-01')).toEqual(['2025-02-26', '2025-02-27', '2025-02-28']);
    expect(baselineDates({ type: 'trailing', days: 1 }, '2024-03-01')).toEqual(['2024-02-29']);
    expect(baselineDates({ type: 'trailing', days: 28 }, '2025-06-30')).toHaveLength(28);
  });

  it('same_weekday: the same weekday of the N weeks before, oldest first', () => {
    // 2025-03-03 is a Monday; so are the dates below.
    expect(baselineDates({ type: 'same_weekday', weeks: 3 }, '2025-03-03')).toEqual(['2025-02-10', '2025-02-17', '2025-02-24']);
    for (const d of baselineDates({ type: 'same_weekday', weeks: 5 }, '2025-03-03')) expect(new Date(`${d}T00:00:00Z`).getUTCDay()).toBe(1);
    expect(baselineDates({ type: 'same_weekday', weeks: 1 }, '2025-01-02')).toEqual(['2024-12-26']);
  });

  it('fixed: the window itself, whatever the run date', () => {
    expect(baselineDates({ type: 'fixed', from: '2025-02-27', to: '2025-03-02' }, '2025-06-01')).toEqual(['2025-02-27', '2025-02-28', '2025-03-01', '2025-03-02']);
    expect(baselineDates({ type: 'fixed', from: '2025-02-27', to: '2025-03-02' }, '2025-01-01')).toHaveLength(4);
  });
});

describe('dateInZone', () => {
  it('gives the calendar date of an instant in a zone east of UTC, around its midnight', () => {
    // Europe/Berlin is UTC+1 in winter (CET) and UTC+2 in summer (CEST), per the IANA tz database.
    expect(dateInZone(new Date('2025-03-02T22:59:59Z'), 'Europe/Berlin')).toBe('2025-03-02');
    expect(dateInZone(new Date('2025-03-02T23:00:00Z'), 'Europe/Berlin')).toBe('2025-03-03');
    expect(dateInZone(new Date('2025-07-01T21:59:59Z'), 'Europe/Berlin')).toBe('2025-07-01');
    expect(dateInZone(new Date('2025-07-01T22:00:00Z'), 'Europe/Berlin')).toBe('2025-07-02');
  });

  it('gives the calendar date in a zone west of UTC, across a year end', () => {
    // America/New_York is UTC-5 in winter (EST).
    expect(dateInZone(new Date('2025-01-01T04:59:59Z'), 'America/New_York')).toBe('2024-12-31');
    expect(dateInZone(new Date('2025-01-01T05:00:00Z'), 'America/New_York')).toBe('2025-01-01');
    expect(dateInZone(new Date('2025-01-01T04:59:59Z'), 'UTC')).toBe('2025-01-01');
  });

  it('handles zones a whole day apart and half-hour offsets', () => {
    const instant = new Date('2025-05-10T11:30:00Z');
    expect(dateInZone(instant, 'Pacific/Kiritimati')).toBe('2025-05-11'); // UTC+14
    expect(dateInZone(instant, 'Pacific/Pago_Pago')).toBe('2025-05-10'); // UTC-11
    expect(dateInZone(new Date('2025-05-10T18:29:59Z'), 'Asia/Kolkata')).toBe('2025-05-10'); // UTC+5:30
    expect(dateInZone(new Date('2025-05-10T18:30:00Z'), 'Asia/Kolkata')).toBe('2025-05-11');
  });

  it('gives the date on a daylight-saving day (Europe/Berlin springs forward at 01:00 UTC on 2025-03-30)', () => {
    expect(dateInZone(new Date('2025-03-29T22:59:59Z'), 'Europe/Berlin')).toBe('2025-03-29');
    expect(dateInZone(new Date('2025-03-29T23:00:00Z'), 'Europe/Berlin')).toBe('2025-03-30');
    expect(dateInZone(new Date('2025-03-30T21:59:59Z'), 'Europe/Berlin')).toBe('2025-03-30');
    expect(dateInZone(new Date('2025-03-30T22:00:00Z'), 'Europe/Berlin')).toBe('2025-03-31');
  });

  it('always writes four digits for the year', () => {
    expect(dateInZone(new Date('0099-03-02T12:00:00Z'), 'UTC')).toBe('0099-03-02');
  });
});
