//! Secrets: argon2id password hashes, random session and API tokens, and their stored hashes.

use std::sync::{Mutex, PoisonError};

use argon2::password_hash::phc::{Output, ParamsString, PasswordHash, Salt};
use argon2::{Algorithm, Argon2, Block, Params, Version};
use blake2::{Blake2s256, Digest};

/// The parameters new hashes are made with: argon2id over 7 MiB in 5 passes, 1 lane. The
/// OWASP Password Storage Cheat Sheet lists this among its equally strong argon2id settings
/// beside the library's default of 19 MiB in 2 passes (the list as remembered, not looked up
/// here); it takes about the same work, in a third of the memory, which the server holds for
/// as long as it runs (see [`MEMORY`]). A stored hash made with other parameters is checked
/// under its own and made again with these at its next sign-in ([`needs_rehash`]).
fn new_params() -> Params {
    Params::new(7168, 5, 1, None).expect("valid argon2 parameters")
}

/// Hashes a password with argon2id ([`new_params`]) off the async runtime; the PHC string to store.
pub async fn hash_password(password: String) -> Result<String, PasswordError> {
    tokio::task::spawn_blocking(move || hash_now(password.as_bytes()))
        .await
        .map_err(|_| PasswordError)?
}

/// Checks a password against a stored PHC string off the async runtime.
pub async fn verify_password(password: String, stored: String) -> bool {
    tokio::task::spawn_blocking(move || verify_now(password.as_bytes(), &stored))
        .await
        .unwrap_or(false)
}

/// Checks a password against the stored hash of an account that may sign in, or, when there is
/// none (no such name, or a disabled account), against a fixed hash made at first use with the
/// same parameters, and answers no. Either way one full argon2id check runs, so the time taken
/// does not tell which names exist.
pub async fn verify_password_or_dummy(password: String, stored: Option<String>) -> bool {
    match stored {
        Some(stored) => verify_password(password, stored).await,
        None => {
            tokio::task::spawn_blocking(move || verify_now(password.as_bytes(), dummy_hash()))
                .await
                .ok();
            false
        }
    }
}

/// The stand-in hash: a random secret nobody knows, hashed once per process.
fn dummy_hash() -> &'static str {
    static DUMMY: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    DUMMY.get_or_init(|| hash_now(new_secret("").as_bytes()).unwrap_or_default())
}

/// The memory argon2id works in, kept and reused by every hash of the process (7 MiB at
/// [`new_params`]; it grows to a stored hash's own parameters when they ask for more).
/// A fresh block per hash stayed resident in the allocator arena of whichever blocking thread
/// ran it, so a few sign-ins held over 100 MB; reused, it is held once (a larger one is given
/// back after its hash). Hashes therefore run one at a time, which also bounds what a flood of
/// sign-ins can take from the shop's cores (the sign-in throttle bounds how many wait).
static MEMORY: Mutex<Vec<Block>> = Mutex::new(Vec::new());

/// `password` hashed with `salt` by `algorithm`, `version` and `params` into `out`, in the
/// shared memory.
fn hash_into(
    (algorithm, version, params): (Algorithm, Version, Params),
    password: &[u8],
    salt: &[u8],
    out: &mut [u8],
) -> Result<(), PasswordError> {
    let blocks = params.block_count();
    let mut memory = MEMORY.lock().unwrap_or_else(PoisonError::into_inner);
    if memory.len() < blocks {
        memory.resize(blocks, Block::default());
    }
    let hashed = Argon2::new(algorithm, version, params)
        .hash_password_into_with_memory(password, salt, out, &mut memory[..blocks])
        .map_err(|_| PasswordError);
    // A stored hash that asked for more than new hashes do keeps no more than they need.
    let usual = new_params().block_count();
    if memory.len() > usual {
        memory.truncate(usual);
        memory.shrink_to_fit();
    }
    hashed
}

/// A new argon2id hash of `password` with a random 16-byte salt, as a PHC string.
fn hash_now(password: &[u8]) -> Result<String, PasswordError> {
    let params = new_params();
    let mut salt = [0u8; 16];
    getrandom::fill(&mut salt).map_err(|_| PasswordError)?;
    let mut out = [0u8; Params::DEFAULT_OUTPUT_LEN];
    let how = (Algorithm::Argon2id, Version::V0x13, params.clone());
    hash_into(how, password, &salt, &mut out)?;
    let phc = PasswordHash {
        algorithm: Algorithm::Argon2id.ident(),
        version: Some(Version::V0x13.into()),
        params: ParamsString::try_from(&params).map_err(|_| PasswordError)?,
        salt: Some(Salt::new(&salt).map_err(|_| PasswordError)?),
        hash: Some(Output::new(&out).map_err(|_| PasswordError)?),
    };
    Ok(phc.to_string())
}

/// Whether `password` hashes to the stored PHC string under its own algorithm, version,
/// parameters and salt (compared in constant time).
fn verify_now(password: &[u8], stored: &str) -> bool {
    let Ok(phc) = PasswordHash::new(stored) else {
        return false;
    };
    let (Some(salt), Some(expected)) = (&phc.salt, &phc.hash) else {
        return false;
    };
    let how = (
        Algorithm::try_from(phc.algorithm.as_str()),
        phc.version
            .map_or(Ok(Version::default()), Version::try_from),
        Params::try_from(&phc),
    );
    let (Ok(algorithm), Ok(version), Ok(params)) = how else {
        return false;
    };
    let mut out = vec![0u8; expected.len()];
    hash_into((algorithm, version, params), password, salt, &mut out).is_ok()
        && Output::new(&out).is_ok_and(|computed| computed == *expected)
}

/// Whether a stored PHC string was made otherwise than new hashes are (other parameters, an
/// older algorithm or version), so that a sign-in that has just checked it stores a new one.
pub fn needs_rehash(stored: &str) -> bool {
    let Ok(phc) = PasswordHash::new(stored) else {
        return true;
    };
    let current = (Algorithm::Argon2id.ident(), Some(u32::from(Version::V0x13)));
    (phc.algorithm, phc.version) != current
        || Params::try_from(&phc).map_or(true, |p| {
            let (now, cost) = (new_params(), |p: &Params| {
                (p.m_cost(), p.t_cost(), p.p_cost())
            });
            cost(&p) != cost(&now)
        })
}

/// Hashing a password failed (never expected with valid parameters).
#[derive(Debug, thiserror::Error)]
#[error("could not hash the password")]
pub struct PasswordError;

/// A new random secret: the prefix and 32 random bytes as hex (256 bits).
pub fn new_secret(prefix: &str) -> String {
    let mut bytes = [0u8; 32];
    getrandom::fill(&mut bytes).expect("the operating system's random source is available");
    let mut out = String::with_capacity(prefix.len() + 64);
    out.push_str(prefix);
    out.push_str(&hex(&bytes));
    out
}

/// The stored form of a high-entropy secret (session cookie or API token). A fast hash is
/// enough: the secrets are random 256-bit values, not guessable passwords.
pub fn hash_secret(secret: impl AsRef<[u8]>) -> String {
    hex(&Blake2s256::digest(secret.as_ref()))
}

/// Compares two secrets without leaking where they differ through timing.
pub fn same_secret(a: &str, b: &str) -> bool {
    let (a, b) = (a.as_bytes(), b.as_bytes());
    a.len() == b.len() && a.iter().zip(b).fold(0u8, |acc, (x, y)| acc | (x ^ y)) == 0
}

fn hex(bytes: &[u8]) -> String {
    bytes.iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[tokio::test]
    async fn a_hashed_password_verifies_and_a_wrong_one_does_not() {
        let hash = hash_password("correct horse".into()).await.unwrap();
        assert!(hash.starts_with("$argon2id$"));
        assert!(verify_password("correct horse".into(), hash.clone()).await);
        assert!(!verify_password("wrong horse".into(), hash).await);
    }

    /// The argon2 crate's own hasher and verifier (the reference implementation of RFC 9106
    /// in Rust that made every stored hash so far) and ours agree both ways: a stored hash
    /// still verifies, and a new one is one the library accepts, with the same parameters.
    #[test]
    fn hashes_made_by_the_argon2_library_and_by_the_shared_memory_agree() {
        use argon2::password_hash::{PasswordHasher, PasswordVerifier};
        let by_library = Argon2::default()
            .hash_password(b"correct horse")
            .unwrap()
            .to_string();
        assert!(verify_now(b"correct horse", &by_library));
        assert!(!verify_now(b"wrong horse", &by_library));
        let ours = hash_now(b"correct horse").unwrap();
        let parsed = PasswordHash::new(&ours).unwrap();
        assert!(
            Argon2::default()
                .verify_password(b"correct horse", &parsed)
                .is_ok()
        );
        assert!(
            Argon2::default()
                .verify_password(b"wrong horse", &parsed)
                .is_err()
        );
        // The parameters written: m = 7168 KiB, t = 5, p = 1.
        assert!(ours.starts_with("$argon2id$v=19$m=7168,t=5,p=1$"), "{ours}");
        // The library's default hash (19 MiB, 2 passes) still verifies, and asks to be made
        // again; ours does not.
        assert!(needs_rehash(&by_library));
        assert!(!needs_rehash(&ours));
        // A hash under other parameters (more memory, one pass) is checked under its own.
        let other = Argon2::new(
            Algorithm::Argon2id,
            Version::V0x13,
            Params::new(32768, 1, 1, None).unwrap(),
        )
        .hash_password(b"correct horse")
        .unwrap()
        .to_string();
        assert!(verify_now(b"correct horse", &other));
        assert!(!verify_now(
            b"correct horse",
            "$argon2id$v=19$m=19456,t=2,p=1$bad"
        ));
    }

    #[test]
    fn secrets_are_long_random_and_compare_in_full() {
        let a = new_secret("lp_");
        let b = new_secret("lp_");
        assert_eq!(a.len(), 3 + 64);
        assert_ne!(a, b);
        assert!(same_secret(&a, &a.clone()));
        assert!(!same_secret(&a, &b));
        assert_ne!(hash_secret(&a), hash_secret(&b));
    }
}
