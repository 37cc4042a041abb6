/** The calendar date at the instant `now` in an IANA time zone, as 'YYYY-MM-DD'. */
export function localDate(now: Date, timeZone: string): string {
  const parts = new Intl.DateTimeFormat('en-US', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(now);
  const part = (type: string) => parts.find((p) => p.type === type)!.value;
  return `${part('year')}-${part('month')}-${part('day')}`;
}

/**
 * The weekday (Monday to Friday) before `date`: Monday's is the Friday before. Public
 * holidays are not known here, so the check after a holiday reports the holiday's data
 * as missing; that is the safe side for an operations desk.
 */
export function previousBusinessDay(date: string): string {
  const d = new Date(`${date}T00:00:00Z`);
  if (Number.isNaN(d.getTime()) || d.toISOString().slice(0, 10) !== date) throw new Error(`not a date (YYYY-MM-DD): ${date}`);
  do d.setUTCDate(d.getUTCDate() - 1);
  while (d.getUTCDay() === 0 || d.getUTCDay() === 6);
  return d.toISOString().slice(0, 10);
}
