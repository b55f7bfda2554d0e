# Fails when a public core header (core/<stage>/*.hpp) is missing from the umbrella header
# include/spurcast/spurcast.hpp, which library users include as <spurcast/spurcast.hpp>.
file(GLOB headers RELATIVE ${SOURCE_DIR} ${SOURCE_DIR}/core/*/*.hpp)
file(READ ${SOURCE_DIR}/include/spurcast/spurcast.hpp umbrella)
set(missing "")
foreach(h ${headers})
  string(FIND "${umbrella}" "#include \"${h}\"" at)
  if(at EQUAL -1)
    list(APPEND missing ${h})
  endif()
endforeach()
if(missing)
  message(FATAL_ERROR "core headers missing from include/spurcast/spurcast.hpp: ${missing}")
endif()
