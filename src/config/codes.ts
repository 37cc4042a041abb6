import { z } from 'zod';

/** Field types several parts of the config share. */

export const currencyCode = z.string().regex(/^[A-Z]{3}$/, 'an ISO 4217 code: three capital letters');

export const isoDate = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'a date YYYY-MM-DD');
