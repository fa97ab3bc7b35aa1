// The daily tables (schema/002_daily.sql): daily_figures, daily_flag_counts and daily_settings.
// The daily module computes the figures (daily.hpp); the store keeps them.
//
// A thin handle on its store's connection (Store::daily()): reads see the writes of the batch open
// on that store.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "stagewell/daily_rows.hpp"
#include "stagewell/result.hpp"
#include "stagewell/store_types.hpp"

namespace stagewell {

class DailyTable : store_detail::TableHandle {
 public:
  // Stores one day's figures and flag counts, replacing what was stored; deletes the rows of an
  // empty day. REQUIRES: `batch` is open on this table's store.
  Result<void> write_day(WriteBatch& batch, SiteKey site, const daily::DayFigures& figures);
  // Deletes all of a site's figures and flag counts. REQUIRES: as write_day.
  Result<void> erase_site(WriteBatch& batch, SiteKey site);

  // The stored figures of days `from` to `to` (inclusive), with their flag counts, in day order.
  Result<std::vector<daily::DayFigures>> days(SiteKey site, daily::Day from, daily::Day to);
  // The first and last day with stored figures; nullopt when the site has none.
  Result<std::optional<std::pair<daily::Day, daily::Day>>> day_range(SiteKey site);

  // The settings the site's figures were computed with (daily.hpp, settings_text); nullopt when
  // none are recorded.
  Result<std::optional<std::string>> settings(SiteKey site);
  // Records them. REQUIRES: as write_day.
  Result<void> set_settings(WriteBatch& batch, SiteKey site, std::string_view settings);

 private:
  using TableHandle::TableHandle;
};

}  // namespace stagewell
