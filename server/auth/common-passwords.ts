// OWASP ASVS 4.0 §2.1.7: a new password is checked against a list of passwords people commonly choose.
// The list ships with the project: the "passwords-common" dictionary of @zxcvbn-ts/language-common (MIT,
// about 49 000 entries, lowercase), read once on first use.
import { dictionary } from '@zxcvbn-ts/language-common';

let common: Set<string> | null = null;

export function commonPasswordCount(): number {
  common ??= new Set(dictionary['passwords-common']);
  return common.size;
}

/** Whether the password, ignoring case, is on the shipped list of common passwords. */
export function isCommonPassword(password: string): boolean {
  common ??= new Set(dictionary['passwords-common']);
  return common.has(password.toLowerCase());
}
