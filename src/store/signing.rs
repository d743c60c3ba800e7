//! The database's signing key: an Ed25519 pair made for each database. The public half is
//! recorded in the database (`meta`), the private half is a file in a key folder outside it
//! (owner-only), so a copy of the database file does not carry it. Exports, reports and
//! dispute bundles carry the audit head (sequence number and hash) signed with it: each
//! one that leaves the bench is a witness of the history as it stood then.
//!
//! Formats (fixed: old signatures must still verify):
//! - public key file: `shardlog public key 1 <64 hex digits>` and a newline;
//! - private key file `<key folder>/<fingerprint>.key`: `shardlog private key 1 <64 hex>`;
//! - fingerprint: the first 16 bytes of SHA-256 of the public key, hex in groups of 4
//!   joined by hyphens (`3f2a-…`, 39 characters);
//! - the signed message: [`SignedHead::message`].

use std::io::Write;
use std::path::{Path, PathBuf};

use ed25519_dalek::{Signature, Signer, SigningKey, VerifyingKey};
use rusqlite::OptionalExtension;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use super::{canon, Store, StoreError};

const META_KEY: &str = "signing_public_key";
const PUBLIC_PREFIX: &str = "shardlog public key 1 ";
const PRIVATE_PREFIX: &str = "shardlog private key 1 ";

/// The environment variable that names the key folder (tests, a shared bench account).
pub const KEY_DIR_VAR: &str = "SHARDLOG_KEY_DIR";

/// A public key (32 bytes).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PublicKey(pub [u8; 32]);

impl PublicKey {
    pub fn hex(&self) -> String {
        canon::hex(&self.0)
    }

    /// The fingerprint people compare: 16 bytes of SHA-256 of the key, in hyphenated groups.
    pub fn fingerprint(&self) -> String {
        let h = canon::hex(&Sha256::digest(self.0)[..16]);
        h.as_bytes()
            .chunks(4)
            .map(|c| String::from_utf8_lossy(c).into_owned())
            .collect::<Vec<_>>()
            .join("-")
    }

    /// From 64 hex digits.
    pub fn from_hex(s: &str) -> Option<PublicKey> {
        let b = unhex32(s.trim())?;
        VerifyingKey::from_bytes(&b).ok()?;
        Some(PublicKey(b))
    }

    /// The text of a public key file.
    pub fn file_text(&self) -> String {
        format!("{PUBLIC_PREFIX}{}\n", self.hex())
    }

    /// Read the text of a public key file.
    pub fn parse_file_text(text: &str) -> Option<PublicKey> {
        PublicKey::from_hex(text.trim().strip_prefix(PUBLIC_PREFIX)?)
    }
}

/// A fingerprint as typed: hyphens optional, any case. None unless 32 hex digits.
pub fn normalise_fingerprint(s: &str) -> Option<String> {
    let digits: String = s
        .chars()
        .filter(|c| *c != '-' && *c != ':' && !c.is_whitespace())
        .collect::<String>()
        .to_ascii_lowercase();
    if digits.len() != 32 || !digits.bytes().all(|b| b.is_ascii_hexdigit()) {
        return None;
    }
    Some(
        digits
            .as_bytes()
            .chunks(4)
            .map(|c| String::from_utf8_lossy(c).into_owned())
            .collect::<Vec<_>>()
            .join("-"),
    )
}

fn unhex32(s: &str) -> Option<[u8; 32]> {
    if s.len() != 64 || !s.is_ascii() {
        return None;
    }
    let mut out = [0u8; 32];
    for (i, o) in out.iter_mut().enumerate() {
        *o = u8::from_str_radix(s.get(2 * i..2 * i + 2)?, 16).ok()?;
    }
    Some(out)
}

fn unhex64(s: &str) -> Option<[u8; 64]> {
    if s.len() != 128 || !s.is_ascii() {
        return None;
    }
    let mut out = [0u8; 64];
    for (i, o) in out.iter_mut().enumerate() {
        *o = u8::from_str_radix(s.get(2 * i..2 * i + 2)?, 16).ok()?;
    }
    Some(out)
}

/// The audit head as it stood when a file left the bench, signed with the database's key.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SignedHead {
    /// Sequence number of the last audit row (0 on an empty log).
    pub seq: i64,
    /// Its hash.
    pub hash: String,
    /// SHA-256 of what the head was signed together with (a bundle's content digest, an
    /// export's or a report's own digest).
    pub content_sha256: String,
    /// The public key, 64 hex digits.
    pub public_key: String,
    /// Its fingerprint (what `shardlog key` prints).
    pub fingerprint: String,
    /// Ed25519 signature of [`SignedHead::message`], 128 hex digits.
    pub signature: String,
}

impl SignedHead {
    /// The bytes signed: a fixed text naming the head and the content.
    pub fn message(seq: i64, hash: &str, content_sha256: &str) -> String {
        format!("shardlog signed audit head 1\nseq {seq}\nhash {hash}\ncontent {content_sha256}\n")
    }

    /// The head as `SEQ:HASH`, the form `verify --anchor` takes.
    pub fn anchor(&self) -> String {
        format!("{}:{}", self.seq, self.hash)
    }

    /// Check the signature against the key the head names; Err says what is wrong.
    pub fn check(&self) -> Result<PublicKey, String> {
        let key = PublicKey::from_hex(&self.public_key)
            .ok_or_else(|| "its public key is not an Ed25519 key".to_string())?;
        if key.fingerprint() != self.fingerprint {
            return Err(format!(
                "its fingerprint {} is not that of its public key ({})",
                self.fingerprint,
                key.fingerprint()
            ));
        }
        let sig = unhex64(&self.signature)
            .ok_or_else(|| "its signature is not 128 hex digits".to_string())?;
        let vk = VerifyingKey::from_bytes(&key.0)
            .map_err(|_| "its public key is not an Ed25519 key".to_string())?;
        let msg = SignedHead::message(self.seq, &self.hash, &self.content_sha256);
        vk.verify_strict(msg.as_bytes(), &Signature::from_bytes(&sig))
            .map_err(|_| {
                "the signature does not match the head and content it signs (edited after signing)"
                    .to_string()
            })?;
        Ok(key)
    }
}

/// Where the signing key of a database is, and whether this machine holds it.
#[derive(Debug, Clone)]
pub struct KeyStatus {
    pub public: PublicKey,
    pub private_file: PathBuf,
    pub private_present: bool,
    /// Made by this call.
    pub created: bool,
}

/// The private key file of `key` in `dir`.
pub fn private_key_path(dir: &Path, key: &PublicKey) -> PathBuf {
    dir.join(format!("{}.key", key.fingerprint()))
}

fn key_err(path: &Path, e: impl std::fmt::Display) -> StoreError {
    StoreError::File {
        path: path.display().to_string(),
        message: e.to_string(),
    }
}

/// Make a new key pair, write its private half into `dir` (created owner-only) and return
/// the public half.
fn create_pair(dir: &Path) -> Result<PublicKey, StoreError> {
    let mut seed = [0u8; 32];
    getrandom::fill(&mut seed)
        .map_err(|e| key_err(dir, format!("no random numbers for a new key: {e}")))?;
    let sk = SigningKey::from_bytes(&seed);
    seed.fill(0);
    let public = PublicKey(sk.verifying_key().to_bytes());
    let mut b = std::fs::DirBuilder::new();
    b.recursive(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::DirBuilderExt;
        b.mode(0o700);
    }
    b.create(dir).map_err(|e| key_err(dir, e))?;
    let path = private_key_path(dir, &public);
    let mut o = std::fs::OpenOptions::new();
    o.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        o.mode(0o600);
    }
    let mut f = o.open(&path).map_err(|e| key_err(&path, e))?;
    let text = format!("{PRIVATE_PREFIX}{}\n", canon::hex(&sk.to_bytes()));
    f.write_all(text.as_bytes())
        .and_then(|_| f.sync_all())
        .map_err(|e| key_err(&path, e))?;
    super::sync_dir(dir).map_err(|e| key_err(dir, e))?;
    Ok(public)
}

/// Read the private key of `public` from `dir`; None when the file is not there.
fn load_private(dir: &Path, public: &PublicKey) -> Result<Option<SigningKey>, StoreError> {
    let path = private_key_path(dir, public);
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(None),
        Err(e) => return Err(key_err(&path, e)),
    };
    let seed = text
        .trim()
        .strip_prefix(PRIVATE_PREFIX)
        .and_then(unhex32)
        .ok_or_else(|| key_err(&path, "not a shardlog private key file"))?;
    let sk = SigningKey::from_bytes(&seed);
    if sk.verifying_key().to_bytes() != public.0 {
        return Err(key_err(
            &path,
            "this private key does not belong to the database's public key",
        ));
    }
    Ok(Some(sk))
}

impl Store {
    /// The public key recorded in the database, if one was made.
    pub fn public_key(&self) -> Result<Option<PublicKey>, StoreError> {
        let hex: Option<String> = self
            .conn
            .query_row("SELECT value FROM meta WHERE key = ?1", [META_KEY], |r| {
                r.get(0)
            })
            .optional()?;
        match hex {
            None => Ok(None),
            Some(h) => PublicKey::from_hex(&h).map(Some).ok_or_else(|| {
                StoreError::Database("the recorded public key is not an Ed25519 key".into())
            }),
        }
    }

    /// The database's key, made now (private half into `key_dir`) when it has none and the
    /// database can be written. None for a read-only database without a key.
    pub fn signing_key(&self, key_dir: &Path) -> Result<Option<KeyStatus>, StoreError> {
        let (public, created) = match self.public_key()? {
            Some(p) => (p, false),
            None if self.is_read_only() => return Ok(None),
            None => {
                let p = create_pair(key_dir)?;
                self.conn.execute(
                    "INSERT INTO meta (key, value) VALUES (?1, ?2)",
                    [META_KEY, &p.hex()],
                )?;
                (p, true)
            }
        };
        let private_file = private_key_path(key_dir, &public);
        let private_present = load_private(key_dir, &public)?.is_some();
        Ok(Some(KeyStatus {
            public,
            private_file,
            private_present,
            created,
        }))
    }

    /// The audit head signed together with `content_sha256`, with the database's key from
    /// `key_dir`. None when this machine does not hold the private key (a copy of a
    /// database made elsewhere) or a read-only database has no key yet.
    pub fn sign_head(
        &self,
        key_dir: &Path,
        content_sha256: &str,
    ) -> Result<Option<SignedHead>, StoreError> {
        let (seq, hash) = self.audit_head_entry()?;
        self.sign_head_at(key_dir, seq, &hash, content_sha256)
    }

    /// [`Store::sign_head`] for the head `seq`/`hash` read earlier (with the content it is
    /// signed with); refused unless the chain holds that hash at that entry.
    pub fn sign_head_at(
        &self,
        key_dir: &Path,
        seq: i64,
        hash: &str,
        content_sha256: &str,
    ) -> Result<Option<SignedHead>, StoreError> {
        if self.audit_hash_at(seq)?.as_deref() != Some(hash) {
            return Err(StoreError::Database(format!(
                "the audit chain does not hold {hash} at entry {seq}; nothing was signed"
            )));
        }
        let Some(status) = self.signing_key(key_dir)? else {
            return Ok(None);
        };
        let Some(sk) = load_private(key_dir, &status.public)? else {
            return Ok(None);
        };
        Ok(Some(sign_with(&sk, seq, hash, content_sha256)))
    }
}

fn sign_with(sk: &SigningKey, seq: i64, hash: &str, content_sha256: &str) -> SignedHead {
    let public = PublicKey(sk.verifying_key().to_bytes());
    let msg = SignedHead::message(seq, hash, content_sha256);
    SignedHead {
        seq,
        hash: hash.to_string(),
        content_sha256: content_sha256.to_string(),
        public_key: public.hex(),
        fingerprint: public.fingerprint(),
        signature: canon::hex(&sk.sign(msg.as_bytes()).to_bytes()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn head() -> SignedHead {
        let sk = SigningKey::from_bytes(&[7u8; 32]);
        sign_with(&sk, 12, &"ab".repeat(32), &"cd".repeat(32))
    }

    #[test]
    fn a_signed_head_checks_and_any_edit_breaks_it() {
        let h = head();
        assert!(h.check().is_ok());
        let mut e = h.clone();
        e.seq = 13;
        assert!(e.check().unwrap_err().contains("does not match"));
        let mut e = h.clone();
        e.content_sha256 = "ce".repeat(32);
        assert!(e.check().is_err());
        let other = SigningKey::from_bytes(&[8u8; 32]);
        let mut e = h.clone();
        e.public_key = canon::hex(&other.verifying_key().to_bytes());
        assert!(e.check().unwrap_err().contains("fingerprint"));
        e.fingerprint = PublicKey(other.verifying_key().to_bytes()).fingerprint();
        assert!(e.check().unwrap_err().contains("does not match"));
    }

    #[test]
    fn fingerprints_and_key_files_read_back() {
        let k = PublicKey(
            SigningKey::from_bytes(&[7u8; 32])
                .verifying_key()
                .to_bytes(),
        );
        let fp = k.fingerprint();
        assert_eq!(fp.len(), 39);
        assert_eq!(
            normalise_fingerprint(&fp.replace('-', "").to_uppercase()),
            Some(fp.clone())
        );
        assert_eq!(normalise_fingerprint("12-34"), None);
        assert_eq!(PublicKey::parse_file_text(&k.file_text()), Some(k));
        assert_eq!(PublicKey::parse_file_text("shardlog public key 1 zz"), None);
    }

    #[test]
    fn a_new_pair_is_private_to_its_owner_and_signs() {
        let dir = tempfile::tempdir().unwrap();
        let kd = dir.path().join("keys");
        let s = Store::open(&dir.path().join("a.db")).unwrap();
        let st = s.signing_key(&kd).unwrap().unwrap();
        assert!(st.created && st.private_present);
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let m = std::fs::metadata(&st.private_file).unwrap().permissions();
            assert_eq!(m.mode() & 0o777, 0o600);
            let m = std::fs::metadata(&kd).unwrap().permissions();
            assert_eq!(m.mode() & 0o777, 0o700);
        }
        let again = s.signing_key(&kd).unwrap().unwrap();
        assert!(!again.created);
        assert_eq!(again.public, st.public);
        let h = s.sign_head(&kd, &"00".repeat(32)).unwrap().unwrap();
        assert_eq!(h.check().unwrap(), st.public);
        // a key folder without the private half: nothing is signed
        let elsewhere = dir.path().join("other-keys");
        assert!(s.sign_head(&elsewhere, &"00".repeat(32)).unwrap().is_none());
    }
}
