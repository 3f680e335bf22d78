import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible';
import { db } from '../../../db/index.ts';
import { config } from './config.ts';
import { TooManyRequests } from './errors.ts';

const WINDOW_SECONDS = 15 * 60;
// How many more failures one address may have over all accounts than one account from that address.
const ADDRESS_FACTOR = 50;

let limiters: { perAccount: RateLimiterPostgres; perAddress: RateLimiterPostgres } | undefined;

/**
 * Failed sign-ins counted in PostgreSQL (table signin_failures), so every web process sees the same
 * counts and a restart forgets none. Per address and account, so one family member's typos never
 * lock out another; plus a looser per-address ceiling against someone trying many accounts.
 */
function signinLimiters() {
  if (limiters) return limiters;
  const common = { storeClient: db(), storeType: 'sequelize', tableName: 'signin_failures', tableCreated: true, duration: WINDOW_SECONDS };
  const points = config().signinAttemptsPer15Min;
  limiters = {
    perAccount: new RateLimiterPostgres({ ...common, keyPrefix: 'account', points }),
    perAddress: new RateLimiterPostgres({ ...common, keyPrefix: 'address', points: points * ADDRESS_FACTOR }),
  };
  return limiters;
}

const accountKey = (address: string, email: string) => `${address} ${email}`;

/** The refusal to give when this address, or this address for this account, used up its attempts; null while attempts are left. */
export async function signinRefusal(address: string, email: string): Promise<TooManyRequests | null> {
  const { perAccount, perAddress } = signinLimiters();
  const [account, overall] = await Promise.all([perAccount.get(accountKey(address, email)), perAddress.get(address)]);
  for (const [res, limit] of [
    [account, perAccount.points],
    [overall, perAddress.points],
  ] as const) {
    if (res && res.consumedPoints >= limit) {
      return new TooManyRequests('Too many sign-in attempts. Wait a few minutes and try again.', Math.max(1, Math.ceil(res.msBeforeNext / 1000)));
    }
  }
  return null;
}

/** Counts one failed attempt (a wrong password, or a request for a sign-in link, which costs an e-mail). */
export async function recordSigninFailure(address: string, email: string): Promise<void> {
  const { perAccount, perAddress } = signinLimiters();
  // consume() rejects with the counter once the limit is passed; the count is stored either way.
  const counted = (p: Promise<unknown>) => p.catch((err) => (err instanceof RateLimiterRes ? undefined : Promise.reject(err)));
  await Promise.all([counted(perAccount.consume(accountKey(address, email))), counted(perAddress.consume(address))]);
}
