//! A small argument reader shared by every subcommand: `--flag value`, `--flag=value`,
//! boolean `--flag`, and positionals. Unknown flags are an error (exit 2).

use std::collections::BTreeMap;

pub struct Args {
    pub positionals: Vec<String>,
    values: BTreeMap<String, String>,
    switches: Vec<String>,
    used: std::cell::RefCell<Vec<String>>,
}

impl Args {
    /// `boolean` lists the flags that take no value.
    pub fn parse(raw: &[String], boolean: &[&str]) -> Result<Args, String> {
        let mut a = Args { positionals: vec![], values: BTreeMap::new(), switches: vec![], used: Default::default() };
        let mut i = 0;
        while i < raw.len() {
            let s = &raw[i];
            if let Some(flag) = s.strip_prefix("--") {
                if let Some((k, v)) = flag.split_once('=') {
                    a.values.insert(k.to_string(), v.to_string());
                } else if boolean.contains(&flag) {
                    a.switches.push(flag.to_string());
                } else {
                    let v = raw.get(i + 1).ok_or_else(|| format!("--{flag} needs a value"))?;
                    a.values.insert(flag.to_string(), v.clone());
                    i += 1;
                }
            } else {
                a.positionals.push(s.clone());
            }
            i += 1;
        }
        Ok(a)
    }
    pub fn get(&self, k: &str) -> Option<&str> {
        self.used.borrow_mut().push(k.to_string());
        self.values.get(k).map(|s| s.as_str())
    }
    pub fn flag(&self, k: &str) -> bool {
        self.used.borrow_mut().push(k.to_string());
        self.switches.iter().any(|s| s == k)
    }
    pub fn parse_num<T: std::str::FromStr>(&self, k: &str) -> Result<Option<T>, String> {
        match self.get(k) {
            None => Ok(None),
            Some(v) => v.parse::<T>().map(Some).map_err(|_| format!("--{k}: cannot read '{v}'")),
        }
    }
    /// Call after reading every flag: errors on flags nobody asked for.
    pub fn finish(&self) -> Result<(), String> {
        let used = self.used.borrow();
        for k in self.values.keys().chain(self.switches.iter()) {
            if !used.contains(k) {
                return Err(format!("unknown option --{k}"));
            }
        }
        Ok(())
    }
}
