//! The last load outcome of each folder of the data folder, at start-up and after every
//! `LoadDataset`: what health checking reports per folder, and what logs name.

use std::collections::BTreeMap;
use std::sync::Mutex;

/// How the last load of one dataset folder went.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum FolderOutcome {
    /// Loaded and serving as this dataset ("id@version").
    Loaded {
        /// The dataset it holds.
        dataset: String,
    },
    /// Refused; `serving_earlier` tells whether an earlier load of the folder still serves.
    Refused {
        /// Why (file, line and field of every problem, when the files were read).
        reason: String,
        /// An earlier successful load of this folder still serves.
        serving_earlier: bool,
    },
}

impl FolderOutcome {
    /// Whether data loaded from the folder are being served.
    pub fn serving(&self) -> bool {
        match self {
            Self::Loaded { .. } => true,
            Self::Refused { serving_earlier, .. } => *serving_earlier,
        }
    }
}

/// Outcomes by folder name.
#[derive(Debug, Default)]
pub struct FolderRecord {
    by_name: Mutex<BTreeMap<String, FolderOutcome>>,
}

impl FolderRecord {
    /// Records a successful load of `folder` as `dataset`.
    pub fn loaded(&self, folder: &str, dataset: String) {
        self.lock()
            .insert(folder.to_owned(), FolderOutcome::Loaded { dataset });
    }

    /// Records a refused load of `folder`.
    pub fn refused(&self, folder: &str, reason: String) {
        let mut map = self.lock();
        let serving_earlier = map.get(folder).is_some_and(FolderOutcome::serving);
        map.insert(
            folder.to_owned(),
            FolderOutcome::Refused {
                reason,
                serving_earlier,
            },
        );
    }

    /// Every folder's last outcome, by name.
    pub fn all(&self) -> Vec<(String, FolderOutcome)> {
        self.lock().iter().map(|(k, v)| (k.clone(), v.clone())).collect()
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, BTreeMap<String, FolderOutcome>> {
        self.by_name.lock().unwrap_or_else(|p| p.into_inner())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_refusal_after_a_load_keeps_the_folder_serving() {
        // common practice, no source: a failed reload leaves the earlier data in place
        let r = FolderRecord::default();
        r.refused("a", "broken".into());
        r.loaded("b", "b@1.0.0".into());
        r.refused("b", "broken now".into());
        let all = r.all();
        assert!(!all[0].1.serving());
        assert!(all[1].1.serving());
        r.loaded("a", "a@1.0.0".into());
        assert!(r.all()[0].1.serving());
    }
}
