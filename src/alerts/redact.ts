/**
 * Secrets out of text meant for people and logs (errors, alerts.last_error, status). A
 * secret may hold any characters, CR/LF included: every line of it (and its JSON-escaped
 * form, which is how an error may quote it) is replaced, whole and in pieces.
 */
export const REDACTED = '[redacted]';

/** The shortest piece of a secret worth replacing; shorter ones would blank ordinary words. */
const MIN_PIECE = 4;

export function redactSecrets(text: string, secrets: readonly (string | undefined)[]): string {
  const pieces = new Set<string>();
  for (const secret of secrets) {
    if (secret === undefined || secret.length === 0) continue;
    const escaped = JSON.stringify(secret).slice(1, -1);
    for (const form of [secret, escaped, encodeURIComponent(secret)]) {
      // the whole secret always, however short; its pieces only when long enough
      pieces.add(form);
      for (const part of form.split(/[\r\n\t ]+|\\[rnt]/)) if (part.length >= MIN_PIECE) pieces.add(part);
    }
  }
  // longest first, so a whole secret is replaced before one of its pieces
  let out = text;
  for (const piece of [...pieces].sort((a, b) => b.length - a.length)) out = out.split(piece).join(REDACTED);
  return out;
}

/** RFC 6750 section 2.1: a bearer token is a b64token; anything else cannot go into the header. */
export function isBearerToken(token: string): boolean {
  return /^[A-Za-z0-9\-._~+/]+=*$/.test(token);
}
