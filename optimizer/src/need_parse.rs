//! (in progress)
use crate::error::{Error, Location, Result};
use crate::need::Need;
pub(crate) fn parse_need(_bytes: &[u8], file: &str) -> Result<Need> {
    Err(Error::input(Location::file(file), "need parsing is being written"))
}
