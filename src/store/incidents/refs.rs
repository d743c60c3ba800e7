//! An incident's references: the codes of its site, asset, supplier, product and lot
//! turned into keys, looked up once per writing transaction, created when missing.

use std::collections::HashMap;

use rusqlite::Connection;

use crate::store::audit::Chain;
use crate::store::model::*;
use crate::store::refdata;
use crate::store::{IdGen, Store, StoreError};

/// Foreign keys of an incident, resolved from its codes.
#[derive(Debug, Clone, Default)]
pub(crate) struct Refs {
    pub asset: Option<String>,
    pub site: Option<String>,
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
}

/// Keys of sites, assets, suppliers, products and lots by code, looked up (or created)
/// once per writing transaction: a bulk import resolves the same few codes for every row.
/// Valid only inside the transaction that filled it.
#[derive(Debug, Default)]
pub(crate) struct RefCache {
    sites: HashMap<String, String>,
    assets: HashMap<String, String>,
    suppliers: HashMap<String, String>,
    products: HashMap<(String, String), String>,
    lots: HashMap<(String, String), String>,
}

impl RefCache {
    /// The keys [`Store::resolve_refs`] gives `inc` when every code it names is held here
    /// (without the database); None when one is not.
    pub(crate) fn known(&self, inc: &Incident) -> Option<Refs> {
        let mut refs = Refs::default();
        if let Some(code) = &inc.site {
            refs.site = Some(self.sites.get(code)?.clone());
        }
        if let Some(code) = &inc.asset {
            refs.asset = Some(self.assets.get(code)?.clone());
        }
        if let Some(code) = &inc.glass.supplier {
            let sid = self.suppliers.get(code)?;
            if let Some(pcode) = &inc.glass.product {
                let pid = self.products.get(&(sid.clone(), pcode.clone()))?;
                if let Some(lcode) = &inc.glass.lot {
                    refs.lot = Some(self.lots.get(&(pid.clone(), lcode.clone()))?.clone());
                }
                refs.product = Some(pid.clone());
            }
            refs.supplier = Some(sid.clone());
        }
        Some(refs)
    }

    fn site(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.sites,
            code,
            || code.to_string(),
            || refdata::site_id(conn, code),
        )
    }
    fn asset(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.assets,
            code,
            || code.to_string(),
            || refdata::asset_id(conn, code),
        )
    }
    fn supplier(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.suppliers,
            code,
            || code.to_string(),
            || refdata::supplier_id(conn, code),
        )
    }
    fn product(
        &mut self,
        conn: &Connection,
        supplier_id: &str,
        code: &str,
    ) -> Result<Option<String>, StoreError> {
        let key = (supplier_id.to_string(), code.to_string());
        cached(
            &mut self.products,
            &key,
            || key.clone(),
            || refdata::product_id(conn, supplier_id, code),
        )
    }
    fn lot(
        &mut self,
        conn: &Connection,
        product_id: &str,
        code: &str,
    ) -> Result<Option<String>, StoreError> {
        let key = (product_id.to_string(), code.to_string());
        cached(
            &mut self.lots,
            &key,
            || key.clone(),
            || refdata::lot_id(conn, product_id, code),
        )
    }
}

/// The id `map` holds for `key`, else what `look` finds (kept when it finds one; a code that
/// names nothing is asked again, as it may be created meanwhile). `owned` makes the key to
/// keep, so a hit costs no allocation.
fn cached<K, Q>(
    map: &mut HashMap<K, String>,
    key: &Q,
    owned: impl FnOnce() -> K,
    look: impl FnOnce() -> Result<Option<String>, StoreError>,
) -> Result<Option<String>, StoreError>
where
    K: std::borrow::Borrow<Q> + Eq + std::hash::Hash,
    Q: Eq + std::hash::Hash + ?Sized,
{
    if let Some(id) = map.get(key) {
        return Ok(Some(id.clone()));
    }
    let id = look()?;
    if let Some(id) = &id {
        map.insert(owned(), id.clone());
    }
    Ok(id)
}

impl Store {
    /// Resolve codes to keys; unknown sites, assets, suppliers, products and lots are
    /// created (and audited) unless `strict`.
    pub(crate) fn resolve_refs(
        conn: &Connection,
        chain: &mut Chain,
        ids: &mut IdGen,
        inc: &Incident,
        stamp: &Stamp,
        strict: bool,
        cache: &mut RefCache,
    ) -> Result<Refs, StoreError> {
        let ms = stamp.at.timestamp_millis();
        let missing = |what: &str, code: &str| {
            StoreError::invalid(
                what,
                format!("no {what} with code \"{code}\" (strict mode)"),
            )
        };
        let mut refs = Refs::default();
        if let Some(code) = &inc.site {
            refs.site = match cache.site(conn, code)? {
                Some(id) => Some(id),
                None if strict => return Err(missing("site", code)),
                None => {
                    let s = Site {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        name: code.clone(),
                        region: String::new(),
                    };
                    refdata::insert_site(conn, chain, &s, stamp)?;
                    cache.sites.insert(code.clone(), s.id.clone());
                    Some(s.id)
                }
            };
        }
        if let Some(code) = &inc.asset {
            refs.asset = match cache.asset(conn, code)? {
                Some(id) => Some(id),
                None if strict => return Err(missing("asset", code)),
                None => {
                    let a = Asset {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        asset_type: "other".into(),
                        name: code.clone(),
                        site: inc.site.clone(),
                    };
                    refdata::insert_asset(conn, chain, &a, stamp)?;
                    cache.assets.insert(code.clone(), a.id.clone());
                    Some(a.id)
                }
            };
        }
        if let Some(code) = &inc.glass.supplier {
            let sid = match cache.supplier(conn, code)? {
                Some(id) => id,
                None if strict => return Err(missing("supplier", code)),
                None => {
                    let s = Supplier {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        name: code.clone(),
                    };
                    refdata::insert_supplier(conn, chain, &s, stamp)?;
                    cache.suppliers.insert(code.clone(), s.id.clone());
                    s.id
                }
            };
            if let Some(pcode) = &inc.glass.product {
                let pid = match cache.product(conn, &sid, pcode)? {
                    Some(id) => id,
                    None if strict => return Err(missing("product", pcode)),
                    None => {
                        let p = Product {
                            id: ids.uuid_v7(ms),
                            supplier: code.clone(),
                            code: pcode.clone(),
                            name: pcode.clone(),
                        };
                        refdata::insert_product(conn, chain, &p, stamp)?;
                        cache
                            .products
                            .insert((sid.clone(), pcode.clone()), p.id.clone());
                        p.id
                    }
                };
                if let Some(lcode) = &inc.glass.lot {
                    refs.lot = Some(match cache.lot(conn, &pid, lcode)? {
                        Some(id) => id,
                        None if strict => return Err(missing("lot", lcode)),
                        None => {
                            let l = Lot {
                                id: ids.uuid_v7(ms),
                                supplier: code.clone(),
                                product: pcode.clone(),
                                code: lcode.clone(),
                                made_on: None,
                                heat_soak: None,
                            };
                            refdata::insert_lot(conn, chain, &l, stamp)?;
                            cache
                                .lots
                                .insert((pid.clone(), lcode.clone()), l.id.clone());
                            l.id
                        }
                    });
                }
                refs.product = Some(pid);
            }
            refs.supplier = Some(sid);
        }
        Ok(refs)
    }
}
