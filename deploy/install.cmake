# What `cmake --install` (and the Debian package, deploy/package.cmake) puts where. Included from
# the top-level CMakeLists.txt after GNUInstallDirs; the programs' own rules are in
# daemon/CMakeLists.txt. Paths relative to the prefix unless said otherwise:
#
#   bin/stagewell, sbin/stagewelld                 the programs
#   lib/systemd/system/stagewelld.service          the unit (STAGEWELL_SYSTEMD_UNIT_DIR)
#   lib/sysusers.d/stagewell.conf                  its user and group (STAGEWELL_SYSUSERS_DIR)
#   <sysconfdir>/stagewell/stagewell.yaml          the configuration: /etc/stagewell with prefix
#                                                  /usr (the package), /etc/opt/NAME/stagewell
#                                                  with /opt/NAME, <prefix>/etc/stagewell else
#   share/man/man1, man5, man8                     the manual pages
#   share/bash-completion/completions/stagewell    command-line completion
#   share/doc/stagewell/examples                   demo.yaml and reference.yaml
#
# systemd also reads units and sysusers.d files under /usr/local/lib, so the default prefix works
# as it is.

set(STAGEWELL_SYSTEMD_UNIT_DIR "lib/systemd/system" CACHE STRING
    "Where the systemd unit is installed (relative to the prefix, or absolute)")
set(STAGEWELL_SYSUSERS_DIR "lib/sysusers.d" CACHE STRING
    "Where the sysusers.d file is installed (relative to the prefix, or absolute)")

# The unit and the configuration depend on the prefix as it is at install time, not as it was
# configured: cpack installs with the prefix /usr whatever prefix the build directory has. So the
# unit is filled in, and the configuration's directory chosen, when the installation runs. The
# rule below mirrors GNUInstallDirs' for the configuration directory (/etc for the prefixes / and
# /usr, /etc/opt/NAME for /opt/NAME).
set(unit_template "${CMAKE_CURRENT_SOURCE_DIR}/deploy/stagewelld.service.in")
# One filled-in unit per prefix, so that two installations at once (cpack beside a plain one)
# never write the same file.
set(unit_dir "${CMAKE_CURRENT_BINARY_DIR}/deploy/unit-for-prefix")
if(IS_ABSOLUTE "${STAGEWELL_SYSTEMD_UNIT_DIR}")
  set(unit_destination "${STAGEWELL_SYSTEMD_UNIT_DIR}")
else()
  set(unit_destination "\${prefix}/${STAGEWELL_SYSTEMD_UNIT_DIR}")
endif()
install(CODE "
  set(prefix \"\${CMAKE_INSTALL_PREFIX}\")
  if(prefix STREQUAL \"\" OR prefix STREQUAL \"/usr\")  # \"\": the prefix /, its slash removed
    set(stagewell_etc \"/etc/stagewell\")
  elseif(prefix MATCHES \"^/opt/\")  # FHS: /opt/NAME's configuration is in /etc/opt/NAME
    set(stagewell_etc \"/etc\${prefix}/stagewell\")
  elseif(IS_ABSOLUTE \"${CMAKE_INSTALL_SYSCONFDIR}\")
    set(stagewell_etc \"${CMAKE_INSTALL_SYSCONFDIR}/stagewell\")
  else()
    set(stagewell_etc \"\${prefix}/${CMAKE_INSTALL_SYSCONFDIR}/stagewell\")
  endif()
  if(IS_ABSOLUTE \"${CMAKE_INSTALL_SBINDIR}\")
    set(STAGEWELL_UNIT_SBINDIR \"${CMAKE_INSTALL_SBINDIR}\")
  else()
    set(STAGEWELL_UNIT_SBINDIR \"\${prefix}/${CMAKE_INSTALL_SBINDIR}\")
  endif()
  set(STAGEWELL_UNIT_CONFIG \"\${stagewell_etc}/stagewell.yaml\")
  configure_file(\"${unit_template}\" \"${unit_dir}\${prefix}/stagewelld.service\" @ONLY)
  file(INSTALL \"${unit_dir}\${prefix}/stagewelld.service\" DESTINATION \"${unit_destination}\"
       PERMISSIONS OWNER_READ OWNER_WRITE GROUP_READ WORLD_READ)
  # In the package a conffile (deploy/debian/conffiles), which dpkg keeps when it was edited. A
  # plain installation does the same its own way: an existing file is the administrator's and is
  # never overwritten.
  if(EXISTS \"\$ENV{DESTDIR}\${stagewell_etc}/stagewell.yaml\")
    message(STATUS \"Kept: \$ENV{DESTDIR}\${stagewell_etc}/stagewell.yaml (not overwritten)\")
  else()
    file(INSTALL \"${CMAKE_CURRENT_SOURCE_DIR}/config/stagewell.yaml\"
         DESTINATION \"\${stagewell_etc}\" PERMISSIONS OWNER_READ OWNER_WRITE GROUP_READ WORLD_READ)
  endif()
")
install(FILES deploy/stagewell.sysusers DESTINATION "${STAGEWELL_SYSUSERS_DIR}"
        RENAME stagewell.conf)

install(FILES man/stagewell.1 DESTINATION "${CMAKE_INSTALL_MANDIR}/man1")
install(FILES man/stagewell.yaml.5 DESTINATION "${CMAKE_INSTALL_MANDIR}/man5")
install(FILES man/stagewelld.8 DESTINATION "${CMAKE_INSTALL_MANDIR}/man8")
install(FILES deploy/bash-completion/stagewell
        DESTINATION "${CMAKE_INSTALL_DATADIR}/bash-completion/completions")

# Examples, not configurations: under the documentation, never in /etc. The demo's readings
# (deploy/make_demo_data.py, made when deploy/demo.sh starts) stay in the source.
install(FILES config/demo.yaml config/reference.yaml
        DESTINATION "${CMAKE_INSTALL_DOCDIR}/examples")
