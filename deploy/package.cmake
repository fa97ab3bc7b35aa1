# The Debian package, built by CPack from what deploy/install.cmake installs:
#
#   cpack -G DEB -B DIR --config build/CPackConfig.cmake     → DIR/stagewell_<version>_<arch>.deb
#
# Installed with the prefix /usr whatever the build directory's prefix is, the configuration in
# /etc/stagewell as a conffile. Its maintainer scripts (deploy/debian/) create the user and tell
# systemd about the unit, and never enable or start the service: the administrator first writes
# a configuration for their own channels. Included last from the top-level CMakeLists.txt.

set(CPACK_GENERATOR DEB)
set(CPACK_PACKAGE_NAME stagewell)
set(CPACK_PACKAGE_VERSION "${PROJECT_VERSION}")
set(CPACK_PACKAGE_CONTACT "stagewell developers")
set(CPACK_DEBIAN_PACKAGE_MAINTAINER "stagewell developers")
set(CPACK_PACKAGE_DESCRIPTION_SUMMARY "stage readings to discharge (Manning's equation), kept in SQLite")
set(CPACK_PACKAGE_DESCRIPTION
    "stagewelld reads water stage readings from drop folders, logger files and TCP, converts them\n\
to discharge by Manning's equation for each configured channel section, flags doubtful\n\
readings, keeps everything in SQLite and serves a status page. stagewell checks\n\
configurations, computes single values and reports daily figures.\n\
Discharge computed this way is an estimate, to be verified with field measurements.")
set(CPACK_DEBIAN_PACKAGE_SECTION science)
set(CPACK_DEBIAN_PACKAGE_PRIORITY optional)
set(CPACK_DEBIAN_FILE_NAME DEB-DEFAULT)  # stagewell_<version>_<arch>.deb
# The prefix /usr, reached by DESTDIR: the installation then runs with CMAKE_INSTALL_PREFIX /usr,
# so the rules that decide paths when they run (deploy/install.cmake: the unit, /etc) see the
# package's prefix rather than a staging directory.
set(CPACK_SET_DESTDIR ON)
set(CPACK_INSTALL_PREFIX /usr)
set(CPACK_PACKAGING_INSTALL_PREFIX /usr)
set(CPACK_STRIP_FILES ON)  # the build keeps debug information; the package does not need it

# Depends: from the libraries the programs link (dpkg-shlibdeps, package dpkg-dev); without it,
# the same list written out for Debian 12.
find_program(STAGEWELL_DPKG_SHLIBDEPS dpkg-shlibdeps)
if(STAGEWELL_DPKG_SHLIBDEPS)
  set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
else()
  set(CPACK_DEBIAN_PACKAGE_DEPENDS
      "libc6, libgcc-s1, libstdc++6, libsqlite3-0, libfmt9, libspdlog1.10-fmt9, libyaml-cpp0.7, libcctz2, libpq5")
endif()
set(CPACK_DEBIAN_PACKAGE_RECOMMENDS "systemd")
set(CPACK_DEBIAN_PACKAGE_SUGGESTS "sqlite3")

# Maintainer scripts and the conffile list. The sysusers.d path in postinst is the package's.
if(IS_ABSOLUTE "${STAGEWELL_SYSUSERS_DIR}")
  set(STAGEWELL_PACKAGE_SYSUSERS "${STAGEWELL_SYSUSERS_DIR}/stagewell.conf")
else()
  set(STAGEWELL_PACKAGE_SYSUSERS
      "${CPACK_PACKAGING_INSTALL_PREFIX}/${STAGEWELL_SYSUSERS_DIR}/stagewell.conf")
endif()
configure_file(deploy/debian/postinst.in "${CMAKE_CURRENT_BINARY_DIR}/deploy/debian/postinst"
               @ONLY FILE_PERMISSIONS OWNER_READ OWNER_WRITE OWNER_EXECUTE GROUP_READ
               GROUP_EXECUTE WORLD_READ WORLD_EXECUTE)
set(CPACK_DEBIAN_PACKAGE_CONTROL_EXTRA
    "${CMAKE_CURRENT_BINARY_DIR}/deploy/debian/postinst"
    "${CMAKE_CURRENT_SOURCE_DIR}/deploy/debian/prerm"
    "${CMAKE_CURRENT_SOURCE_DIR}/deploy/debian/postrm"
    "${CMAKE_CURRENT_SOURCE_DIR}/deploy/debian/conffiles")
# Scripts 0755 and conffiles 0644 in the control archive, whatever the modes in the checkout.
set(CPACK_DEBIAN_PACKAGE_CONTROL_STRICT_PERMISSION ON)

include(CPack)
