// The alarm events (schema/003_alarms.sql): written in the transaction of the readings that raised
// or cleared them, read back to restore the evaluators and for the page and the metrics.
//
// A thin handle on its store's connection (Store::alarms()).
#pragma once

#include <cstddef>
#include <vector>

#include "stagewell/alarm_rows.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

class AlarmTable : store_detail::TableHandle {
 public:
  // A raise adds an open alarm (refused when one of the site and kind is open already: the
  // table's unique index); a clear closes the site's open alarm of that kind (nothing when none
  // is open). REQUIRES: `batch` is open on this table's store.
  Result<void> record(WriteBatch& batch, SiteKey site, const alarms::AlarmEvent& event);

  // The alarms open now, of every site, ordered by site id and raise time.
  Result<std::vector<alarms::AlarmRecord>> open();
  // The kinds open for one site (to restore its evaluator).
  Result<std::vector<alarms::AlarmKind>> open_kinds(SiteKey site);
  // For each site and kind ever raised, whether one is open now; by site id and kind name, at most
  // `max_rows`.
  Result<std::vector<alarms::AlarmState>> states(std::size_t max_rows);
  // Whether the database has the alarms (a schema before migration 3 has not).
  Result<bool> available();

 private:
  using TableHandle::TableHandle;
};

}  // namespace stagewell
