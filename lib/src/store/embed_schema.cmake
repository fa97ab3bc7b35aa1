# Writes a C++ source that holds schema/NNN_name.sql as raw string literals, so that the program
# never reads schema/ at run time. Run by lib/CMakeLists.txt in script mode:
#   cmake -DSCHEMA_FILES=a.sql|b.sql -DOUTPUT=migrations.cpp -P embed_schema.cmake
# Optional: -DHEADER=x/migrations.hpp -DNAMESPACE=stagewell::x_detail for another set of migrations
# (the warehouse's, schema/warehouse/), declared alike in that header.
# The files must be numbered 001, 002, ... without gaps: a gap or a repeat fails the build.

if(NOT DEFINED HEADER)
  set(HEADER "store/migrations.hpp")
endif()
if(NOT DEFINED NAMESPACE)
  set(NAMESPACE "stagewell::store_detail")
endif()
string(REPLACE "|" ";" files "${SCHEMA_FILES}")
list(SORT files)

set(entries "")
set(expected 1)
foreach(file ${files})
  get_filename_component(name ${file} NAME_WE)
  if(NOT name MATCHES "^([0-9][0-9][0-9])_[a-z0-9_]+$")
    message(FATAL_ERROR "${file}: a migration is named NNN_name.sql (lower case, digits, _)")
  endif()
  math(EXPR number "${CMAKE_MATCH_1}")  # drops the leading zeros
  if(NOT number EQUAL expected)
    message(FATAL_ERROR "${file}: expected migration number ${expected}; numbers run 001, 002, ...")
  endif()
  file(READ ${file} sql)
  if(sql MATCHES "\\)stagewell_sql\"")
    message(FATAL_ERROR "${file} contains the raw-string delimiter )stagewell_sql\"")
  endif()
  string(APPEND entries
    "    {${number}, \"${name}\", R\"stagewell_sql(${sql})stagewell_sql\"},\n")
  math(EXPR expected "${expected} + 1")
endforeach()

if(expected EQUAL 1)
  message(FATAL_ERROR "no migrations found in ${SCHEMA_FILES}")
endif()

set(content "// Generated from schema/*.sql by lib/src/store/embed_schema.cmake. Do not edit.
#include \"${HEADER}\"

namespace ${NAMESPACE} {
namespace {

const Migration kMigrations[] = {
${entries}};

}  // namespace

std::span<const Migration> migrations() { return kMigrations; }

}  // namespace ${NAMESPACE}
")

file(WRITE ${OUTPUT} "${content}")
