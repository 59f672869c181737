//! Secrets: argon2id password hashes, random session and API tokens, and their stored hashes.

use argon2::Argon2;
use argon2::password_hash::phc::PasswordHash;
use argon2::password_hash::{PasswordHasher, PasswordVerifier};
use blake2::{Blake2s256, Digest};

/// Hashes a password with argon2id (default parameters) off the async runtime.
pub async fn hash_password(password: String) -> Result<String, PasswordError> {
    tokio::task::spawn_blocking(move || {
        Argon2::default()
            .hash_password(password.as_bytes())
            .map(|h| h.to_string())
            .map_err(|_| PasswordError)
    })
    .await
    .map_err(|_| PasswordError)?
}

/// Checks a password against a stored PHC string off the async runtime.
pub async fn verify_password(password: String, stored: String) -> bool {
    tokio::task::spawn_blocking(move || {
        PasswordHash::new(&stored).is_ok_and(|parsed| {
            Argon2::default()
                .verify_password(password.as_bytes(), &parsed)
                .is_ok()
        })
    })
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
            tokio::task::spawn_blocking(move || {
                if let Ok(parsed) = PasswordHash::new(dummy_hash()) {
                    let _ = Argon2::default().verify_password(password.as_bytes(), &parsed);
                }
            })
            .await
            .ok();
            false
        }
    }
}

/// The stand-in hash: a random secret nobody knows, hashed once per process.
fn dummy_hash() -> &'static str {
    static DUMMY: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    DUMMY.get_or_init(|| {
        Argon2::default()
            .hash_password(new_secret("").as_bytes())
            .map(|h| h.to_string())
            .unwrap_or_default()
    })
}

/// Hashing a password failed (never expected with default parameters).
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
