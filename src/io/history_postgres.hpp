#pragma once
// The PostgreSQL history store (history_postgres.cpp), for open_history() only.
#include <memory>
#include <string>

#include "lopside/history.hpp"

namespace lopside::detail {

/// Connects to the server a postgresql:// URI names (libpq connection URI) and brings its
/// schema to the version this program writes. Throws InputError naming the URI (with the
/// password, if any, left out).
std::unique_ptr<HistoryStore> open_postgres_history(const std::string& uri);

}  // namespace lopside::detail
