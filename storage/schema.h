// rotorbench storage (internal): the schema as an ordered list of forward migrations.
//
// Migration k takes a file from user_version k to k + 1 and runs in its own
// transaction. Released migrations are never edited; add a new one instead.
#pragma once

#include <string_view>
#include <vector>

namespace rb::storage {

/// SQL of each migration, index k = from version k to k + 1.
const std::vector<std::string_view>& Migrations();

}  // namespace rb::storage
