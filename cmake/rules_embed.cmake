# rules_embed.cmake — compiles the rule files into the library as a fallback table.
# At build time cmake/scripts/rules_embed_gen.cmake (run with cmake -P, no other tools) writes
# ${CMAKE_BINARY_DIR}/generated/rules_embedded.c from the JSON files in reactions/; it is
# re-generated whenever one of them (or the generator) changes, and a new or removed file
# re-runs the configure step through CONFIGURE_DEPENDS.
file(GLOB AS_RULE_FILES CONFIGURE_DEPENDS ${CMAKE_SOURCE_DIR}/reactions/*.json)
list(SORT AS_RULE_FILES)
set(AS_RULES_EMBEDDED_C ${CMAKE_BINARY_DIR}/generated/rules_embedded.c)
add_custom_command(
  OUTPUT ${AS_RULES_EMBEDDED_C}
  COMMAND ${CMAKE_COMMAND} -DAS_RULES_SRC=${CMAKE_SOURCE_DIR}/reactions
          -DAS_RULES_OUT=${AS_RULES_EMBEDDED_C} -P ${CMAKE_SOURCE_DIR}/cmake/scripts/rules_embed_gen.cmake
  DEPENDS ${AS_RULE_FILES} ${CMAKE_SOURCE_DIR}/cmake/scripts/rules_embed_gen.cmake
  COMMENT "Embedding reactions/*.json into the library"
  VERBATIM)
target_sources(addsite_obj PRIVATE ${AS_RULES_EMBEDDED_C})
