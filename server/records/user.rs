//! Staff accounts and what they may do.

use serde::{Deserialize, Serialize};

/// A tech records; an admin also manages users, settings, tokens and deletes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Role {
    Admin,
    Tech,
}

impl Role {
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Admin => "admin",
            Self::Tech => "tech",
        }
    }

    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "admin" => Some(Self::Admin),
            "tech" => Some(Self::Tech),
            _ => None,
        }
    }
}

/// Shortest password accepted.
pub const MIN_PASSWORD_CHARS: usize = 10;

/// A checked new account (the password is hashed by the caller).
#[derive(Debug, Clone)]
pub struct NewUser {
    pub username: String,
    pub role: Role,
}

/// Why a new account was refused, naming the field.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{field}: {message}")]
pub struct UserError {
    pub field: &'static str,
    pub message: String,
}

impl NewUser {
    pub fn parse(username: &str, password: &str, role: Role) -> Result<Self, UserError> {
        let username = username.trim();
        let name_ok = (2..=40).contains(&username.chars().count())
            && username
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || matches!(c, '.' | '-' | '_'));
        if !name_ok {
            return Err(UserError {
                field: "username",
                message: "use 2 to 40 letters, digits, dots, dashes or underscores".into(),
            });
        }
        check_password(password)?;
        Ok(Self {
            username: username.to_string(),
            role,
        })
    }
}

pub fn check_password(password: &str) -> Result<(), UserError> {
    let n = password.chars().count();
    if n < MIN_PASSWORD_CHARS {
        return Err(UserError {
            field: "password",
            message: format!("must be at least {MIN_PASSWORD_CHARS} characters"),
        });
    }
    if n > 200 {
        return Err(UserError {
            field: "password",
            message: "must be at most 200 characters".into(),
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn short_passwords_and_odd_names_are_refused() {
        assert!(NewUser::parse("sam", "123456789", Role::Tech).is_err());
        assert!(NewUser::parse("sam", "1234567890", Role::Tech).is_ok());
        assert_eq!(
            NewUser::parse("<b>", "1234567890", Role::Tech)
                .unwrap_err()
                .field,
            "username"
        );
    }
}
