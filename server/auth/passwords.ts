import bcrypt from 'bcryptjs'

/** bcrypt cost factor (≥ 10 required; 10 keeps sign-in near 60 ms on this class of machine). */
export const BCRYPT_COST = 10

export const hashPassword = (password: string) => bcrypt.hash(password, BCRYPT_COST)
export const verifyPassword = (password: string, hash: string) => bcrypt.compare(password, hash)

/** A hash to compare against when the e-mail is unknown, so both paths take the same time. */
export const DUMMY_HASH = bcrypt.hashSync('pewter-no-such-user', BCRYPT_COST)
