# bash completion for loopwise.
#
# The candidates come from the program itself ('loopwise --complete LINE'),
# which reads its own option table and the .loop file named on the line, so
# this script holds no list of commands, options or names. Installed by
# 'make install' into the bash-completion directory as 'loopwise'.

_loopwise()
{
    local cur=${COMP_WORDS[COMP_CWORD]} prog=${COMP_WORDS[0]} cand
    local line=${COMP_LINE:0:COMP_POINT}
    local -a cands
    prog=${prog/#\~/$HOME}
    COMPREPLY=()
    mapfile -t cands < <("$prog" --complete "$line" 2>/dev/null)
    # bash splits a word at '=' and ':' (COMP_WORDBREAKS); the program
    # completes whole words, so only the part after the break is replaced
    for cand in "${cands[@]}"; do
        case $cand in
        @files)
            compopt -o filenames 2>/dev/null
            mapfile -t -O "${#COMPREPLY[@]}" COMPREPLY < <(compgen -f -- "$cur")
            ;;
        @dirs)
            compopt -o filenames 2>/dev/null
            mapfile -t -O "${#COMPREPLY[@]}" COMPREPLY < <(compgen -d -- "$cur")
            ;;
        *=)
            compopt -o nospace 2>/dev/null
            COMPREPLY+=("$cand")
            ;;
        *)
            COMPREPLY+=("$cand")
            ;;
        esac
    done
}
complete -F _loopwise loopwise
