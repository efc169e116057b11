//! (in progress)
use crate::error::{Error, Location, Result};
use crate::stock::{Stock, StockFile};
pub(crate) fn parse_stock(_files: &[StockFile]) -> Result<Stock> {
    Err(Error::input(Location::file("stock"), "stock parsing is being written"))
}
